import 'server-only';
import { getOrm } from '@/lib/db';
import { redisReady } from '@/lib/redis';
import { mailer } from '@/lib/mail/mailer';

export type DependencyState = 'up' | 'down';

/** Each dependency up or down, never its address or credentials. */
export async function checkHealth(): Promise<{ status: 'ok' | 'degraded'; checks: Record<'database' | 'redis' | 'mail', DependencyState> }> {
  const timeout = <T,>(p: Promise<T>, ms = 2_000) =>
    Promise.race([p, new Promise<never>((_, reject) => setTimeout(() => reject(new Error('timeout')), ms))]);
  const probe = async (fn: () => Promise<unknown>): Promise<DependencyState> => {
    try {
      await timeout(fn());
      return 'up';
    } catch {
      return 'down';
    }
  };
  const [database, redisState, mail] = await Promise.all([
    probe(async () => (await getOrm()).em.getConnection().execute('select 1')),
    probe(async () => (await redisReady()).ping()),
    probe(() => mailer().verify()),
  ]);
  const checks = { database, redis: redisState, mail };
  return { status: Object.values(checks).every((s) => s === 'up') ? 'ok' : 'degraded', checks };
}

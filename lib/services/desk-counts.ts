import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { makeCountKeeper } from '@/lib/recall/kept-counts';
import type { DeskQueue } from '@/lib/recall/desk-address';

/**
 * The recall desk's queue counts, kept per practice, clinician filter and day for
 * DESK_COUNTS_MAX_AGE_MS (lib/env.ts; issue 15, load). Changes made elsewhere (the worker's
 * deliveries, patients' replies, the registry, another web instance) show within that age; a desk
 * action through this instance (send, book, mark, a call note, a visit's edit: `afterDeskAction`)
 * forgets its practice's counts at once, so the coordinator who acted sees the new figures.
 */
export type DeskCounts = Partial<Record<DeskQueue, string>>;
const keeper = makeCountKeeper<DeskCounts>(256);

export function keptDeskCounts(practiceId: string, key: string, count: () => Promise<DeskCounts>, maxAgeMs: number = env.DESK_COUNTS_MAX_AGE_MS): Promise<DeskCounts> {
  return keeper.read(practiceId, key, maxAgeMs, Date.now, count);
}

/** A desk action that forgets its practice's kept counts once it is done (its writes committed), failed or not. */
export function afterDeskAction<A extends unknown[], R>(fn: (em: EntityManager, actor: Actor, ...rest: A) => Promise<R>) {
  return async (em: EntityManager, actor: Actor, ...rest: A): Promise<R> => {
    try {
      return await fn(em, actor, ...rest);
    } finally {
      keeper.forget(actor.practiceId, Date.now());
    }
  };
}

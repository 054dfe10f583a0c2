import { json } from '@/lib/http';
import { checkHealth } from '@/lib/services/health';

export const dynamic = 'force-dynamic';

/** Public: reports each dependency as up or down, without addresses or secrets. */
export async function GET() {
  const health = await checkHealth();
  return json(health, health.status === 'ok' ? 200 : 503);
}

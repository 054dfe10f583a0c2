import { handler, readJson } from '@/lib/http';
import { bookVisits } from '@/lib/services/recall-desk';

/**
 * POST /api/recall/book { visitIds, start: ISO date-time, mode: 'propose' | 'phone', sendNow?, note? }
 * → { results: [{ visitId, ok, outcome, message }], deferred? }.
 */
export const POST = handler('recall.manage', async ({ req, em, actor }) => bookVisits(em, actor, await readJson(req)));

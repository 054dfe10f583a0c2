import { handler, readJson } from '@/lib/http';
import { markVisits } from '@/lib/services/recall-desk';

/** POST /api/recall/mark { visitIds, status: 'attended' | 'missed', note? } → { results: [{ visitId, ok, outcome, message }] }. */
export const POST = handler('recall.manage', async ({ req, em, actor }) => markVisits(em, actor, await readJson(req)));

import { handler, readJson } from '@/lib/http';
import { sendRemindersNow } from '@/lib/services/recall-desk';

/**
 * POST /api/recall/send { visitIds: uuid[] (1–200) } → { results: [{ visitId, ok, outcome, step?, message }], deferred? }.
 * Each visit gets its next reminder step now (or its failed one again); unknown ids → 404, nothing queued.
 */
export const POST = handler('recall.manage', async ({ req, em, actor }) => sendRemindersNow(em, actor, await readJson(req)));

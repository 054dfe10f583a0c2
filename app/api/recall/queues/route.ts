import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { deskQueues } from '@/lib/services/recall-desk';

/**
 * GET /api/recall/queues?clinician=<user id> → { today, clinician, queues: [{ key, label, definition, count }] }
 * (the desk's queues and its "this month" view; clinician narrows every count to that clinician's cases).
 */
export const GET = handler('recall.manage', async ({ req, em, actor }) => deskQueues(em, actor, searchParamsObject(req.url)));

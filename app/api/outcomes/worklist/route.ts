import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesWorklist } from '@/lib/services/outcomes-worklist';

/**
 * GET /api/outcomes/worklist?from&to&clinician&kind&f.<factor>&page&pageSize → one page of the non-healing
 * worklist in urgency order (a clinician: their own cases), with the total and the count per urgency.
 * pageSize 1–200, default 50; a page past the end gives the last.
 */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => outcomesWorklist(em, actor, searchParamsObject(req.url)));

import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesWorklist } from '@/lib/services/outcomes-worklist';

/** GET /api/outcomes/worklist?from&to&clinician&kind → the non-healing worklist in urgency order (a clinician: their own cases). */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => outcomesWorklist(em, actor, searchParamsObject(req.url)));

import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesOverview } from '@/lib/services/outcomes';

/** GET /api/outcomes/overview?from&to&clinician&kind → the overview's figures (a clinician: own cases, plus the practice's). */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => outcomesOverview(em, actor, searchParamsObject(req.url)));

import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesByFactor } from '@/lib/services/outcomes';

/** GET /api/outcomes/factor?factor&from&to&clinician&kind → success per level of a factor, with its test. */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => outcomesByFactor(em, actor, searchParamsObject(req.url)));

import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesCurves } from '@/lib/services/outcomes';

/** GET /api/outcomes/curves?endpoint=healing|tooth&method=turnbull|km&factor&… → curves, numbers at risk, log-rank, cumulative incidence. */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => outcomesCurves(em, actor, searchParamsObject(req.url)));

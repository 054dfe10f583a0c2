import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { followUpRateReport } from '@/lib/services/recall-rate';

/**
 * GET /api/recall/rate?from=YYYY-MM&to=YYYY-MM&pending=count_as_due|exclude
 * → { today, from, to, pending, overall, byMilestone[], byMonth[] } (each group: key, due, attended, pending, rate, interval).
 */
export const GET = handler('recall.manage', async ({ req, em, actor }) => followUpRateReport(em, actor, searchParamsObject(req.url)));

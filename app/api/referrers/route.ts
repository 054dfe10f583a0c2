import { handler, json, readJson } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { createReferrer, listReferrers, ReferrerListQuery } from '@/lib/services/referrers';
import { searchParamsObject } from '@/lib/schemas/paging';

/** GET /api/referrers?page&pageSize&q → Page<ReferrerView>. */
export const GET = handler('patient.read', async ({ req, em, actor }) =>
  listReferrers(em, actor, parseInput(ReferrerListQuery, searchParamsObject(req.url))),
);

/** POST /api/referrers (ReferrerCreateSchema) → 201 { referrer: ReferrerView }. */
export const POST = handler('patient.write', async ({ req, em, actor }) => json({ referrer: await createReferrer(em, actor, await readJson(req)) }, 201));

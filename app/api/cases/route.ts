import { handler, json, readJson } from '@/lib/http';
import { CaseListQuery, createCase, listCases } from '@/lib/services/cases';
import { parseInput } from '@/lib/services/parse';
import { searchParamsObject } from '@/lib/schemas/paging';

/**
 * GET /api/cases?page&pageSize&q&operator&kind&toothGroup&arch&fillLength&visitStatus&dueFrom&dueTo
 *   &completedFrom&completedTo&stage&patient&archived&sort&dir → CasePage (lists comma-separated).
 */
export const GET = handler('patient.read', async ({ req, em, actor }) =>
  listCases(em, actor, parseInput(CaseListQuery, searchParamsObject(req.url))),
);

/** POST /api/cases (CaseCreateSchema) → 201 { case: CaseDetail } with its recall plan when completed. */
export const POST = handler('case.write', async ({ req, em, actor }) => json({ case: await createCase(em, actor, await readJson(req)) }, 201));

import { handler, readJson } from '@/lib/http';
import { archiveCase, getCase, updateCase } from '@/lib/services/cases';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/** GET /api/cases/:id → { case: CaseDetail } (treatment, visits, reviews, timeline). */
export const GET = handler<P>('patient.read', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { case: await getCase(em, actor, id) };
});

/** PATCH /api/cases/:id (CaseUpdateSchema fields; archived: true|false) → { case: CaseDetail & { plan } }. */
export const PATCH = handler<P>('case.write', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { case: await updateCase(em, actor, id, await readJson(req)) };
});

/** DELETE /api/cases/:id archives the case → { case: CaseDetail }. */
export const DELETE = handler<P>('case.write', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { case: await archiveCase(em, actor, id) };
});

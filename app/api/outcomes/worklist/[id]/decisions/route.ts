import { handler, readJson } from '@/lib/http';
import { caseDecisions, recordDecision } from '@/lib/services/outcomes-worklist';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/** GET /api/outcomes/worklist/:caseId/decisions → { decisions }: every next step recorded for the case, newest first. */
export const GET = handler<P>('outcomes.read', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { decisions: await caseDecisions(em, actor, id) };
});

/**
 * POST /api/outcomes/worklist/:caseId/decisions { step, date, note?, apicalDiagnosis? } → the step recorded,
 * the tooth's later case (retreat, surgery) and the re-review visit (watch). The treating clinician only.
 */
export const POST = handler<P>('outcomes.decide', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return recordDecision(em, actor, id, await readJson(req));
});

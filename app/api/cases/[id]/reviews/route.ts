import { handler, json, readJson } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';
import { createReview, listReviews } from '@/lib/services/reviews';

type P = { id: string };

/** GET /api/cases/:id/reviews → CaseReviews { reviews, currentOutcome, currentOutcomeLabel, caution }. */
export const GET = handler<P>('patient.read', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return listReviews(em, actor, id);
});

/** POST /api/cases/:id/reviews (ReviewCreateSchema without caseId; no outcome — it is computed) → 201 { review, visits, currentOutcome, caution }. */
export const POST = handler<P>('review.write', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return json(await createReview(em, actor, id, await readJson(req)), 201);
});

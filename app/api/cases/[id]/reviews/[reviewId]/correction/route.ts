import { handler, json, readJson } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';
import { correctReview } from '@/lib/services/reviews';

const Params = IdParams.extend({ reviewId: IdParams.shape.id });

/**
 * POST /api/cases/:id/reviews/:reviewId/correction { ...findings (ReviewCreateSchema), reason }
 * → 201 { review, visits, currentOutcome, caution }: a new version; the earlier one is kept as superseded.
 */
export const POST = handler<{ id: string; reviewId: string }>('review.write', async ({ req, em, actor, params }) => {
  const { id, reviewId } = parseInput(Params, params);
  return json(await correctReview(em, actor, id, reviewId, await readJson(req)), 201);
});

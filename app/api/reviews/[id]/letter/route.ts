import { handler, json } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { requestOutcomeLetter } from '@/lib/services/referrer-letter';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/**
 * POST /api/reviews/:id/letter → 201 { created: true, to, queued } when the outcome letter of the
 * review is queued to the case's referrer; 200 { created: false, status } when it already was (one
 * letter per review, never twice). 422 when the referrer has no e-mail address.
 */
export const POST = handler<P>('referrer.send', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  const result = await requestOutcomeLetter(em, actor, id);
  return json(result, result.created ? 201 : 200);
});

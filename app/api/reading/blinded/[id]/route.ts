import { handler } from '@/lib/http';
import { blindedFilm } from '@/lib/services/readings';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/**
 * GET /api/reading/blinded/:filmId → { filmId, imageUrl, width, height, calibration } and nothing
 * else: no patient, case, earlier score or reader. 404 unless the reader has a blinded task on the film.
 */
export const GET = handler<P>('reading.queue', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return blindedFilm(em, actor, id);
});

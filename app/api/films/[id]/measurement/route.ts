import { handler, readJson } from '@/lib/http';
import { measureFilm } from '@/lib/services/film-measure';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/**
 * PUT /api/films/:id/measurement, JSON `{ diameter: { a, b }, outline?: [{x,y}, …] }` (original pixels)
 * → { film } with the diameter (mm) and area (mm²) to 0.1. Needs a calibrated film (else 422).
 * Clinicians (review.write); audited film.measured.
 */
export const PUT = handler<P>('review.write', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { film: await measureFilm(em, actor, id, await readJson(req)) };
});

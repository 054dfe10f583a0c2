import { handler, readJson } from '@/lib/http';
import { calibrateFilm } from '@/lib/services/film-measure';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/**
 * PUT /api/films/:id/calibration, JSON `{ source: "dicom" }` or `{ source: "drawn", a: {x,y}, b: {x,y}, mm }`
 * (points in the original's pixels) → { film }. Clinicians (review.write); audited film.calibrated.
 */
export const PUT = handler<P>('review.write', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { film: await calibrateFilm(em, actor, id, await readJson(req)) };
});

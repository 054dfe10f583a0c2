import { handler, readJson } from '@/lib/http';
import { setReferenceFilm } from '@/lib/services/readings';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/** PUT /api/reading/reference/:filmId { pai: 1–5 | null } → the film in (or out of) the practice's reference set. The lead. */
export const PUT = handler<P>('reading.lead', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return setReferenceFilm(em, actor, id, await readJson(req));
});

import { handler, readJson } from '@/lib/http';
import { recordReading } from '@/lib/services/readings';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/**
 * POST /api/reading/films/:filmId/readings { kind: first|second|adjudication|reference-exercise, pai: 1–5, signs? }
 * → the reading recorded (first readings and adjudications also say the film's status next).
 */
export const POST = handler<P>('reading.queue', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return recordReading(em, actor, id, await readJson(req));
});

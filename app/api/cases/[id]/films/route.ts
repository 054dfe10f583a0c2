import { handler, json } from '@/lib/http';
import { filmTooLargeMessage } from '@/lib/films/process';
import { filmMaxBytes, listFilms, uploadFilm } from '@/lib/services/films';
import { ServiceError, ValidationError } from '@/lib/services/errors';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/** GET /api/cases/:id/films → { films: FilmView[], maxBytes }. */
export const GET = handler<P>('film.read', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return listFilms(em, actor, id);
});

/** The multipart framing around the file: the form fields and boundaries are small. */
const FRAMING_BYTES = 64 * 1024;

/**
 * POST /api/cases/:id/films, multipart/form-data: `file` (PNG, JPEG or DICOM, checked by content;
 * at most FILM_MAX_MB, default 40 MB → 413), `role` (pre_operative | post_fill | follow_up),
 * `visitId` (optional) → 201 { film, created: true }, or 200 { film, created: false } when the same
 * file is already stored for this case and role (a retry).
 */
export const POST = handler<P>(
  'film.upload',
  async ({ req, em, actor, params }) => {
    const { id } = parseInput(IdParams, params);
    const max = filmMaxBytes();
    const tooLarge = () => new ServiceError(filmTooLargeMessage(max), 413, undefined, 'payload_too_large');
    if (Number(req.headers.get('content-length') ?? 0) > max + FRAMING_BYTES) throw tooLarge();
    const form = await req.formData().catch(() => {
      throw new ValidationError('The upload could not be read: send the film as the form field “file” of a multipart form.');
    });
    const file = form.get('file');
    const hasFile = file !== null && typeof file !== 'string';
    if (hasFile && file.size > max) throw tooLarge();
    const fields = { role: form.get('role') ?? undefined, visitId: form.get('visitId') ?? undefined };
    // Without a file the service still answers for the case first (404 for another practice's), then 422.
    const result = await uploadFilm(em, actor, id, fields, hasFile ? new Uint8Array(await file.arrayBuffer()) : null);
    return json(result, result.created ? 201 : 200);
  },
  { accept: ['multipart/form-data'] },
);

import { handler } from '@/lib/http';
import { readFilmFile } from '@/lib/services/films';
import { FilmFileParams } from '@/lib/schemas/film';
import { NotFoundError } from '@/lib/services/errors';

type P = { id: string; variant: string };

/**
 * GET /api/films/:id/thumbnail | web | original → the file's bytes. Only through this route: never
 * cached (no-store), never sniffed, named by the film's short id (the original as a download).
 * Every view is audited (film.viewed).
 */
export const GET = handler<P>('film.read', async ({ em, actor, params }) => {
  const parsed = FilmFileParams.safeParse(params);
  if (!parsed.success) throw new NotFoundError('No such film file.');
  const { id, variant } = parsed.data;
  const f = await readFilmFile(em, actor, id, variant);
  return new Response(Buffer.from(f.body), {
    headers: {
      'Content-Type': f.contentType,
      'Content-Length': String(f.body.byteLength),
      'Content-Disposition': `${f.disposition}; filename="${f.filename}"`,
      'Cache-Control': 'no-store',
      'X-Content-Type-Options': 'nosniff',
      'Cross-Origin-Resource-Policy': 'same-origin',
    },
  });
});

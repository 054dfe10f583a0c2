import { handler } from '@/lib/http';
import { blindedImage } from '@/lib/services/readings';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/**
 * GET /api/reading/blinded/:filmId/image → the web rendition for a blinded reader, named neutrally
 * ("film.png"/"film.jpg": no case, patient or film reference in any header), never cached. Audited.
 */
export const GET = handler<P>('reading.queue', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  const f = await blindedImage(em, actor, id);
  return new Response(Buffer.from(f.body), {
    headers: {
      'Content-Type': f.contentType,
      'Content-Length': String(f.body.byteLength),
      'Content-Disposition': `inline; filename="film.${f.contentType === 'image/png' ? 'png' : 'jpg'}"`,
      'Cache-Control': 'no-store',
      'X-Content-Type-Options': 'nosniff',
      'Cross-Origin-Resource-Policy': 'same-origin',
    },
  });
});

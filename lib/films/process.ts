/**
 * A film upload turned into what Lamina stores: the original (a DICOM file as sent; a PNG or JPEG
 * re-encoded by sharp, which drops EXIF, XMP, ICC comments and any other metadata), a web
 * rendition (8-bit grayscale or colour PNG, or JPEG for a JPEG source; at most WEB_MAX_SIDE px on
 * its long side) and a thumbnail (JPEG inside THUMB_SIDE px). DICOM pixels come windowed from
 * lib/films/dicom.ts. Pure computation: bytes in, bytes out.
 */
import { createHash } from 'node:crypto';
import sharp, { type Sharp } from 'sharp';
import { DicomReadError, readDicom, type DicomFilm } from './dicom';
import { THUMB_SIDE, WEB_MAX_SIDE, fitInside } from './sizes';
import { FILM_CONTENT_TYPES, sniffFilm, type FilmKind } from './sniff';

/** Larger images are refused before decoding (a decompression bomb guard): 100 megapixels. */
export const MAX_PIXELS = 100_000_000;

/** The refusal of a file over the size limit (the upload route's early check and processFilm's). */
export const filmTooLargeMessage = (maxBytes: number) => `The file is larger than ${Math.round(maxBytes / 1024 / 1024)} MB, the largest film Lamina takes.`;

export class FilmRejected extends Error {
  constructor(
    readonly status: 413 | 415 | 422,
    readonly reason: 'too_large' | 'wrong_type' | 'truncated' | 'corrupt' | 'unsupported_transfer_syntax' | 'unsupported_pixels' | 'empty',
    message: string,
  ) {
    super(message);
    this.name = 'FilmRejected';
  }
}

export interface Rendition {
  body: Buffer;
  contentType: string;
  width: number;
  height: number;
}

export interface ProcessedFilm {
  kind: FilmKind;
  contentType: string;
  sha256: string;
  byteSize: number;
  width: number;
  height: number;
  original: Rendition;
  web: Rendition;
  thumbnail: Rendition;
  dicom: DicomFilm | null;
}

export const sha256Hex = (bytes: Uint8Array) => createHash('sha256').update(bytes).digest('hex');

async function renditions(pipeline: () => Sharp, width: number, height: number, webAs: 'png' | 'jpeg') {
  const w = fitInside(width, height, WEB_MAX_SIDE);
  const t = fitInside(width, height, THUMB_SIDE);
  const resizedWeb = w.width !== width || w.height !== height ? pipeline().resize(w.width, w.height, { fit: 'fill' }) : pipeline();
  const [web, thumbnail] = await Promise.all([
    (webAs === 'png' ? resizedWeb.png({ compressionLevel: 6 }) : resizedWeb.jpeg({ quality: 92, mozjpeg: false })).toBuffer(),
    pipeline().resize(t.width, t.height, { fit: 'fill' }).jpeg({ quality: 80 }).toBuffer(),
  ]);
  return {
    web: { body: web, contentType: webAs === 'png' ? 'image/png' : 'image/jpeg', ...w },
    thumbnail: { body: thumbnail, contentType: 'image/jpeg', ...t },
  };
}

/** Reads, checks and renders one uploaded file; throws FilmRejected with a message for the uploader. */
export async function processFilm(bytes: Uint8Array, maxBytes: number): Promise<ProcessedFilm> {
  if (bytes.byteLength === 0) throw new FilmRejected(422, 'empty', 'The file is empty.');
  if (bytes.byteLength > maxBytes) throw new FilmRejected(413, 'too_large', filmTooLargeMessage(maxBytes));
  const sniffed = await sniffFilm(bytes);
  if (!sniffed.kind) {
    throw new FilmRejected(
      415,
      'wrong_type',
      `This file is not a PNG, JPEG or DICOM image${sniffed.detected ? ` (its content is ${sniffed.detected})` : ''}, whatever its name says. Upload the radiograph as PNG, JPEG or DICOM.`,
    );
  }
  const sha256 = sha256Hex(bytes);
  const base = { kind: sniffed.kind, contentType: sniffed.contentType, sha256, byteSize: bytes.byteLength };

  if (sniffed.kind === 'dicom') {
    let read;
    try {
      read = readDicom(bytes);
    } catch (e) {
      if (e instanceof DicomReadError) {
        throw new FilmRejected(e.problem === 'unsupported_transfer_syntax' ? 415 : 422, e.problem, e.message);
      }
      throw e;
    }
    const { film, image } = read;
    if (image.width * image.height > MAX_PIXELS) throw new FilmRejected(422, 'unsupported_pixels', 'The image has more than 100 megapixels.');
    const raw = { raw: { width: image.width, height: image.height, channels: image.channels } } as const;
    const r = await renditions(() => sharp(image.pixels, raw), image.width, image.height, 'png');
    return {
      ...base,
      width: image.width,
      height: image.height,
      original: { body: Buffer.from(bytes), contentType: FILM_CONTENT_TYPES.dicom, width: image.width, height: image.height },
      ...r,
      dicom: film,
    };
  }

  // PNG or JPEG: decode once (refusing what sharp cannot read), bake the EXIF orientation in, drop all metadata.
  try {
    const input = () => sharp(bytes, { limitInputPixels: MAX_PIXELS, failOn: 'truncated' }).rotate();
    const original = await (sniffed.kind === 'png' ? input().png({ compressionLevel: 6 }) : input().jpeg({ quality: 95 })).toBuffer({ resolveWithObject: true });
    const { width, height } = original.info;
    const r = await renditions(() => sharp(original.data), width, height, sniffed.kind === 'png' ? 'png' : 'jpeg');
    return { ...base, width, height, original: { body: original.data, contentType: sniffed.contentType, width, height }, ...r, dicom: null };
  } catch {
    throw new FilmRejected(422, 'corrupt', `The ${sniffed.kind.toUpperCase()} file could not be read: it is damaged or cut short.`);
  }
}

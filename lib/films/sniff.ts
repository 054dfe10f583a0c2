/**
 * What a film file is, from its bytes (never its name or the browser's type): DICOM by the
 * 128-byte preamble and "DICM" (DICOM PS3.10 §7.1), PNG and JPEG by their signatures (`file-type`).
 * Pure.
 */
import { fileTypeFromBuffer } from 'file-type';
import { hasDicomPreamble } from './dicom';

export type FilmKind = 'png' | 'jpeg' | 'dicom';

export const FILM_CONTENT_TYPES: Record<FilmKind, string> = {
  png: 'image/png',
  jpeg: 'image/jpeg',
  dicom: 'application/dicom',
};

export type Sniffed = { kind: FilmKind; contentType: string } | { kind: null; detected: string | null };

export async function sniffFilm(bytes: Uint8Array): Promise<Sniffed> {
  if (hasDicomPreamble(bytes)) return { kind: 'dicom', contentType: FILM_CONTENT_TYPES.dicom };
  const t = await fileTypeFromBuffer(bytes).catch(() => undefined);
  if (t?.mime === 'image/png') return { kind: 'png', contentType: FILM_CONTENT_TYPES.png };
  if (t?.mime === 'image/jpeg') return { kind: 'jpeg', contentType: FILM_CONTENT_TYPES.jpeg };
  return { kind: null, detected: t?.mime ?? null };
}

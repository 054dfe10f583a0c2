/**
 * Writes the small invented test films committed in tests/support/films/ (drawn by
 * tests/support/film-fixtures.ts; nothing from a real film):
 *
 *   npx tsx --tsconfig scripts/tsconfig.json scripts/films/draw.ts [DIR]
 *
 * radiograph.png / radiograph.jpg (the JPEG carries an EXIF block the upload must strip), DICOM in
 * Explicit and Implicit VR Little Endian, JPEG Lossless (.57 and .70), and a JPEG 2000 header
 * (.90, with dummy pixel bytes: Lamina must refuse it by name). Deterministic: the same bytes on
 * every run.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { TS, drawRadiograph, filmDicom, filmJpeg, filmPng } from '../../tests/support/film-fixtures';

const dir = process.argv[2] ?? path.join(import.meta.dirname, '../../tests/support/films');
mkdirSync(dir, { recursive: true });
const film = drawRadiograph(160, 120, 7);
const who = { patientName: 'Ashdown^Wren', patientId: 'T-0001', acquisitionDate: '20250310', modality: 'IO' };
const files: Record<string, Buffer> = {
  'radiograph.png': await filmPng(film),
  'radiograph.jpg': await filmJpeg(film),
  'explicit-le.dcm': filmDicom(film, { ...who, transferSyntax: TS.explicitLE, pixelSpacing: [0.02, 0.02], windowCenter: 2048, windowWidth: 4096 }),
  'implicit-le.dcm': filmDicom(film, { ...who, transferSyntax: TS.implicitLE, imagerPixelSpacing: [0.025, 0.025], photometric: 'MONOCHROME1' }),
  'jpeg-lossless-57.dcm': filmDicom(film, { ...who, transferSyntax: TS.jpegLossless57, pixelSpacing: [0.019, 0.019] }),
  'jpeg-lossless-70.dcm': filmDicom(film, { ...who, transferSyntax: TS.jpegLossless70, pixelSpacing: [0.019, 0.021], rescaleSlope: 1, rescaleIntercept: 0 }),
  'jpeg2000.dcm': filmDicom(film, { ...who, transferSyntax: TS.jpeg2000, pixelBytes: new Uint8Array([0xff, 0x4f, 0xff, 0x51, 0, 0, 0, 0]) }),
};
for (const [name, bytes] of Object.entries(files)) {
  writeFileSync(path.join(dir, name), bytes);
  console.log(`${name.padEnd(22)} ${String(bytes.length).padStart(7)} bytes`);
}

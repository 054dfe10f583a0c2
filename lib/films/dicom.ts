/**
 * Reading a DICOM film: the transfer syntax, the tags Lamina keeps (Pixel Spacing / Imager Pixel
 * Spacing, acquisition date, modality; the patient's name and id only to compare with the case's
 * patient), and the pixels as windowed 8-bit grayscale for the web rendition and the thumbnail.
 * Pure: bytes in, values out (no I/O); dicom-parser reads the tags, jpeg-lossless-decoder-js the
 * JPEG-lossless frames.
 *
 * Accepted transfer syntaxes: Implicit and Explicit VR Little Endian (uncompressed), JPEG Lossless
 * process 14 (1.2.840.10008.1.2.4.57) and its first-order prediction variant (.70). Any other
 * syntax is refused with its name and UID (DICOM PS3.6 Annex A, registry of UIDs).
 */
import * as dicomParserModule from 'dicom-parser';
import { Decoder } from 'jpeg-lossless-decoder-js';
import type { DataSet, Element } from 'dicom-parser';
import type { SpacingSourceCode } from './roles';

// dicom-parser ships one UMD file: bundlers (vitest, Next) expose its names on the namespace, Node's
// own ESM loader (tsx scripts, the bench) only as `default`. Take whichever holds them.
const dicomParser = ((dicomParserModule as unknown as { default?: typeof dicomParserModule }).default ?? dicomParserModule) as typeof dicomParserModule;

export const DICOM_PREAMBLE_LENGTH = 128;

/** Transfer syntaxes by UID (names as DICOM PS3.6 Annex A gives them); `accepted` ones Lamina decodes. */
export const TRANSFER_SYNTAXES: Record<string, { name: string; accepted: boolean; encapsulated: boolean }> = {
  '1.2.840.10008.1.2': { name: 'Implicit VR Little Endian', accepted: true, encapsulated: false },
  '1.2.840.10008.1.2.1': { name: 'Explicit VR Little Endian', accepted: true, encapsulated: false },
  '1.2.840.10008.1.2.4.57': { name: 'JPEG Lossless, Non-Hierarchical (Process 14)', accepted: true, encapsulated: true },
  '1.2.840.10008.1.2.4.70': {
    name: 'JPEG Lossless, Non-Hierarchical, First-Order Prediction (Process 14 [Selection Value 1])',
    accepted: true,
    encapsulated: true,
  },
  '1.2.840.10008.1.2.1.99': { name: 'Deflated Explicit VR Little Endian', accepted: false, encapsulated: false },
  '1.2.840.10008.1.2.2': { name: 'Explicit VR Big Endian', accepted: false, encapsulated: false },
  '1.2.840.10008.1.2.4.50': { name: 'JPEG Baseline (Process 1)', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.4.51': { name: 'JPEG Extended (Process 2 & 4)', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.4.80': { name: 'JPEG-LS Lossless Image Compression', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.4.81': { name: 'JPEG-LS Lossy (Near-Lossless) Image Compression', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.4.90': { name: 'JPEG 2000 Image Compression (Lossless Only)', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.4.91': { name: 'JPEG 2000 Image Compression', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.4.201': { name: 'High-Throughput JPEG 2000 Image Compression (Lossless Only)', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.4.203': { name: 'High-Throughput JPEG 2000 Image Compression', accepted: false, encapsulated: true },
  '1.2.840.10008.1.2.5': { name: 'RLE Lossless', accepted: false, encapsulated: true },
};

export type DicomProblem = 'truncated' | 'corrupt' | 'unsupported_transfer_syntax' | 'unsupported_pixels';

/** A DICOM file Lamina cannot take, with a message for the person who sent it. */
export class DicomReadError extends Error {
  constructor(
    readonly problem: DicomProblem,
    message: string,
  ) {
    super(message);
    this.name = 'DicomReadError';
  }
}

export interface DicomFilm {
  transferSyntaxUid: string;
  transferSyntaxName: string;
  rows: number;
  columns: number;
  /** Millimetres between pixel centres: [row spacing (vertical), column spacing (horizontal)]; null without a spacing tag. */
  pixelSpacingMm: [number, number] | null;
  spacingSource: SpacingSourceCode;
  /** ISO date: Acquisition Date, else Content Date, else Study Date; null when none is valid. */
  acquisitionDate: string | null;
  modality: string | null;
  /** Kept only to compare with the case's patient; never shown beside another patient's case. */
  patientName: string | null;
  patientId: string | null;
}

export interface GrayImage {
  width: number;
  height: number;
  /** 1 (grayscale) or 3 (RGB, interleaved). */
  channels: 1 | 3;
  pixels: Uint8Array;
}

/** The file starts with the 128-byte preamble and "DICM" (DICOM PS3.10 §7.1). */
export function hasDicomPreamble(bytes: Uint8Array): boolean {
  return (
    bytes.length >= DICOM_PREAMBLE_LENGTH + 4 &&
    bytes[128] === 0x44 && // D
    bytes[129] === 0x49 && // I
    bytes[130] === 0x43 && // C
    bytes[131] === 0x4d // M
  );
}

/** The name of a transfer syntax for messages: "JPEG 2000 Image Compression (Lossless Only) (1.2.840.10008.1.2.4.90)". */
export function transferSyntaxLabel(uid: string): string {
  const known = TRANSFER_SYNTAXES[uid];
  return known ? `${known.name} (${uid})` : `an unknown transfer syntax (${uid})`;
}

function failure(e: unknown): DicomReadError {
  const text = typeof e === 'string' ? e : e instanceof Error ? e.message : String((e as { exception?: unknown })?.exception ?? e);
  if (/buffer overread|beyond|end of|overrun|past/i.test(text)) {
    return new DicomReadError('truncated', 'The DICOM file ends early (it was cut short, perhaps in the transfer): send the whole file again.');
  }
  return new DicomReadError('corrupt', 'The DICOM file could not be read: its header is damaged. Export it again from the imaging software.');
}

/**
 * The file meta group first (always Explicit VR Little Endian, PS3.10 §7.1): a transfer syntax
 * Lamina does not read is refused by name before its data set is parsed; then the whole file.
 */
function parse(bytes: Uint8Array): { ds: DataSet; uid: string } {
  if (!hasDicomPreamble(bytes)) throw new DicomReadError('corrupt', 'This is not a DICOM file: the “DICM” marker after the 128-byte preamble is missing.');
  let meta: DataSet;
  try {
    meta = dicomParser.readPart10Header(bytes);
  } catch (e) {
    throw failure(e);
  }
  const uid = clean(meta.string('x00020010'));
  if (!uid) throw new DicomReadError('corrupt', 'The DICOM file could not be read: it names no transfer syntax (tag 0002,0010 is missing).');
  assertAccepted(uid);
  try {
    return { ds: dicomParser.parseDicom(bytes), uid };
  } catch (e) {
    throw failure(e);
  }
}

const clean = (s: string | undefined) => {
  const v = s?.replace(/\0/g, '').trim();
  return v ? v : null;
};

/** A DICOM DA value (YYYYMMDD) as an ISO date; null when absent or not a real day. */
export function dicomDate(da: string | null | undefined): string | null {
  const m = /^(\d{4})(\d{2})(\d{2})$/.exec(da?.trim() ?? '');
  if (!m) return null;
  const [y, mo, d] = [Number(m[1]), Number(m[2]), Number(m[3])];
  const t = new Date(Date.UTC(y, mo - 1, d));
  if (t.getUTCFullYear() !== y || t.getUTCMonth() !== mo - 1 || t.getUTCDate() !== d) return null;
  return `${m[1]}-${m[2]}-${m[3]}`;
}

function spacing(ds: DataSet, tag: string): [number, number] | null {
  const row = ds.floatString(tag, 0);
  const col = ds.floatString(tag, 1);
  if (row === undefined || col === undefined || !Number.isFinite(row) || !Number.isFinite(col) || row <= 0 || col <= 0 || row > 10 || col > 10) return null;
  return [row, col];
}

function readTags(ds: DataSet, uid: string): DicomFilm {
  const rows = ds.uint16('x00280010') ?? 0;
  const columns = ds.uint16('x00280011') ?? 0;
  if (!rows || !columns) throw new DicomReadError('corrupt', 'The DICOM file has no image size (Rows and Columns are missing).');
  const pixel = spacing(ds, 'x00280030');
  const imager = pixel ? null : spacing(ds, 'x00181164');
  return {
    transferSyntaxUid: uid,
    transferSyntaxName: TRANSFER_SYNTAXES[uid]?.name ?? 'Unknown',
    rows,
    columns,
    pixelSpacingMm: pixel ?? imager,
    spacingSource: pixel ? 'pixel_spacing' : imager ? 'imager_pixel_spacing' : 'none',
    acquisitionDate: dicomDate(ds.string('x00080022')) ?? dicomDate(ds.string('x00080023')) ?? dicomDate(ds.string('x00080020')),
    modality: clean(ds.string('x00080060'))?.slice(0, 16) ?? null,
    patientName: clean(ds.string('x00100010'))?.slice(0, 200) ?? null,
    patientId: clean(ds.string('x00100020'))?.slice(0, 64) ?? null,
  };
}

/** The tags of a DICOM file (no pixel decoding); refuses a transfer syntax Lamina does not decode. */
export function readDicomTags(bytes: Uint8Array): DicomFilm {
  const { ds, uid } = parse(bytes);
  return readTags(ds, uid);
}

function assertAccepted(uid: string) {
  if (TRANSFER_SYNTAXES[uid]?.accepted) return;
  throw new DicomReadError(
    'unsupported_transfer_syntax',
    `This DICOM file is stored as ${transferSyntaxLabel(uid)}, which Lamina cannot read. Export it as Explicit VR Little Endian (uncompressed) or JPEG Lossless, or as PNG.`,
  );
}

/** The tags and the pixels, windowed to 8 bits (see `toEightBit`). */
export function readDicom(bytes: Uint8Array): { film: DicomFilm; image: GrayImage } {
  const { ds, uid } = parse(bytes);
  const film = readTags(ds, uid);
  const el = ds.elements.x7fe00010;
  if (!el) throw new DicomReadError('truncated', 'The DICOM file has no pixel data: it may have been cut short. Send the whole file again.');

  const samples = ds.uint16('x00280002') ?? 1;
  const bitsAllocated = ds.uint16('x00280100') ?? 16;
  const bitsStored = ds.uint16('x00280101') ?? bitsAllocated;
  const signed = (ds.uint16('x00280103') ?? 0) === 1;
  const photometric = clean(ds.string('x00280004')) ?? 'MONOCHROME2';
  const planar = ds.uint16('x00280006') ?? 0;
  const { rows, columns } = film;
  const count = rows * columns;

  if (samples === 3) {
    if (photometric !== 'RGB' || bitsAllocated !== 8 || TRANSFER_SYNTAXES[uid]!.encapsulated) {
      throw new DicomReadError('unsupported_pixels', `Lamina reads colour DICOM only as uncompressed 8-bit RGB (this file: ${photometric}, ${bitsAllocated}-bit).`);
    }
    const raw = rawBytes(bytes, el.dataOffset, el.length, count * 3);
    const rgb = new Uint8Array(count * 3);
    if (planar === 1) for (let i = 0; i < count; i++) for (let c = 0; c < 3; c++) rgb[i * 3 + c] = raw[c * count + i]!;
    else rgb.set(raw);
    return { film, image: { width: columns, height: rows, channels: 3, pixels: rgb } };
  }
  if (samples !== 1 || (photometric !== 'MONOCHROME1' && photometric !== 'MONOCHROME2')) {
    throw new DicomReadError('unsupported_pixels', `Lamina reads grayscale (MONOCHROME1/2) or RGB DICOM films; this one is ${photometric} with ${samples} samples per pixel.`);
  }
  if (bitsAllocated !== 8 && bitsAllocated !== 16) {
    throw new DicomReadError('unsupported_pixels', `Lamina reads 8- or 16-bit DICOM pixels; this file has ${bitsAllocated} bits allocated.`);
  }

  let values: ArrayLike<number>;
  if (TRANSFER_SYNTAXES[uid]!.encapsulated) {
    values = decodeJpegLossless(ds, el, bitsAllocated, count);
  } else {
    const raw = rawBytes(bytes, el.dataOffset, el.length, count * (bitsAllocated / 8));
    values = bitsAllocated === 8 ? raw : new Uint16Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + count * 2));
  }
  const pixels = toEightBit(values, {
    bitsStored,
    signed,
    slope: ds.floatString('x00281053') ?? 1,
    intercept: ds.floatString('x00281052') ?? 0,
    windowCenter: ds.floatString('x00281050', 0),
    windowWidth: ds.floatString('x00281051', 0),
    invert: photometric === 'MONOCHROME1',
  });
  return { film, image: { width: columns, height: rows, channels: 1, pixels } };
}

function rawBytes(bytes: Uint8Array, offset: number, length: number, need: number): Uint8Array {
  if (offset + need > bytes.length || (length !== 0xffffffff && length < need)) {
    throw new DicomReadError('truncated', 'The DICOM file ends before the end of its pixel data (it was cut short): send the whole file again.');
  }
  return bytes.subarray(offset, offset + need);
}

function decodeJpegLossless(ds: DataSet, el: Element, bitsAllocated: number, count: number): ArrayLike<number> {
  let frame: Uint8Array;
  try {
    const fragments = el.fragments ?? [];
    if (fragments.length === 0) throw new Error('no fragments');
    frame = dicomParser.readEncapsulatedPixelDataFromFragments(ds, el, 0, fragments.length) as Uint8Array;
  } catch {
    throw new DicomReadError('truncated', 'The DICOM file’s compressed pixel data is incomplete: send the whole file again.');
  }
  let out: Uint8Array | Uint16Array;
  try {
    const copy = frame.slice();
    out = new Decoder().decode(copy.buffer, 0, copy.byteLength, bitsAllocated / 8) as Uint8Array | Uint16Array;
  } catch {
    throw new DicomReadError('corrupt', 'The DICOM file’s JPEG Lossless pixel data could not be decoded: it is damaged.');
  }
  if (!out || out.length < count) throw new DicomReadError('corrupt', 'The DICOM file’s JPEG Lossless pixel data does not match its image size.');
  return out;
}

export interface WindowOptions {
  bitsStored: number;
  signed: boolean;
  /** Rescale Slope and Intercept (0028,1053 / 0028,1052): stored value → modality value. */
  slope: number;
  intercept: number;
  /** Window Center / Width (0028,1050 / 0028,1051); min–max of the image when absent. */
  windowCenter?: number;
  windowWidth?: number;
  /** MONOCHROME1: the lowest value is white. */
  invert: boolean;
}

/**
 * Stored values → 8-bit display values: the stored bits (sign-extended when signed), the modality
 * rescale, then the linear VOI window of DICOM PS3.3 C.11.2.1.2.1 (values at or below
 * c − 0.5 − (w − 1)/2 are black, above c − 0.5 + (w − 1)/2 white, linear between), or the image's
 * own minimum to maximum without a window; MONOCHROME1 inverted.
 */
export function toEightBit(values: ArrayLike<number>, o: WindowOptions): Uint8Array {
  const n = values.length;
  const mask = o.bitsStored >= 32 ? 0xffffffff : (1 << o.bitsStored) - 1;
  const signBit = o.bitsStored >= 32 ? 0 : 1 << (o.bitsStored - 1);
  const slope = Number.isFinite(o.slope) && o.slope !== 0 ? o.slope : 1;
  const intercept = Number.isFinite(o.intercept) ? o.intercept : 0;
  const mod = new Float64Array(n);
  let min = Infinity;
  let max = -Infinity;
  for (let i = 0; i < n; i++) {
    let v = values[i]! & mask;
    if (o.signed && v & signBit) v -= mask + 1;
    const m = v * slope + intercept;
    mod[i] = m;
    if (m < min) min = m;
    if (m > max) max = m;
  }
  const out = new Uint8Array(n);
  const hasWindow = o.windowCenter !== undefined && o.windowWidth !== undefined && Number.isFinite(o.windowCenter) && Number.isFinite(o.windowWidth) && o.windowWidth >= 1;
  if (hasWindow) {
    const c = o.windowCenter!;
    const w = o.windowWidth!;
    const lo = c - 0.5 - (w - 1) / 2;
    const hi = c - 0.5 + (w - 1) / 2;
    for (let i = 0; i < n; i++) {
      const x = mod[i]!;
      const y = x <= lo ? 0 : x > hi ? 255 : ((x - (c - 0.5)) / (w - 1) + 0.5) * 255;
      out[i] = Math.round(Math.min(255, Math.max(0, y)));
    }
  } else {
    const range = max - min;
    for (let i = 0; i < n; i++) out[i] = range > 0 ? Math.round(((mod[i]! - min) / range) * 255) : 0;
  }
  if (o.invert) for (let i = 0; i < n; i++) out[i] = 255 - out[i]!;
  return out;
}

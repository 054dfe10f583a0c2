/**
 * Invented test films, drawn by us: a radiograph-like 16-bit image (a tooth with a root filling and
 * a dark periapical area in trabecular bone), written as PNG / JPEG (sharp from raw pixels) or as
 * DICOM bytes written by hand (preamble, file meta group, the tags Lamina reads, pixel data), and a
 * small JPEG Lossless (process 14) encoder for the compressed syntaxes. Used by the demo seed
 * (lib/demo/films.ts), the unit and integration tests (through tests/support/film-fixtures.ts),
 * scripts/films/draw.ts (the committed fixtures in tests/support/films/) and scripts/bench/films.ts.
 * Nothing here comes from any real film or product.
 */
import sharp from 'sharp';
import { createRandom } from './random';

export interface DrawnFilm {
  width: number;
  height: number;
  /** 12-bit values (0–4095) in 16-bit words, row by row. */
  values: Uint16Array;
}

/** A periapical-style radiograph: bone texture, a tooth with a bright root filling, a dark lesion at the apex. */
export function drawRadiograph(width: number, height: number, seed = 1, lesionScale = 1): DrawnFilm {
  const rnd = createRandom(seed);
  const values = new Uint16Array(width * height);
  const cx = width / 2;
  const crownTop = height * 0.08;
  const apexY = height * 0.78;
  /** The dark area's radius; `lesionScale` 0 draws a healed apex (the demo's healed follow-ups). */
  const lesionR = Math.min(width, height) * 0.07 * lesionScale;
  // Coarse trabecular noise on a small grid, interpolated.
  const gw = 24;
  const gh = 24;
  const grid = Array.from({ length: (gw + 1) * (gh + 1) }, () => rnd.between(-1, 1));
  for (let y = 0; y < height; y++) {
    const t = y / height;
    for (let x = 0; x < width; x++) {
      const gx = (x / width) * gw;
      const gy = t * gh;
      const ix = Math.floor(gx);
      const iy = Math.floor(gy);
      const fx = gx - ix;
      const fy = gy - iy;
      const at = (a: number, b: number) => grid[b * (gw + 1) + a]!;
      const n = at(ix, iy) * (1 - fx) * (1 - fy) + at(ix + 1, iy) * fx * (1 - fy) + at(ix, iy + 1) * (1 - fx) * fy + at(ix + 1, iy + 1) * fx * fy;
      let v = 1500 + 350 * n + 200 * t; // bone
      // The tooth: a crown, then a root tapering to the apex.
      const half = y < height * 0.35 ? width * 0.2 : width * 0.2 * Math.max(0.12, (apexY - y) / (apexY - height * 0.35));
      if (y > crownTop && y < apexY && Math.abs(x - cx) < half) v = 2900 + 150 * n;
      if (y > crownTop && y < height * 0.3 && Math.abs(x - cx) < width * 0.17) v = 3700; // enamel and a filling
      // The root filling: a bright line down the canal.
      if (y > height * 0.3 && y < apexY - 2 && Math.abs(x - cx) < Math.max(1.5, width * 0.012)) v = 4000;
      // The periapical radiolucency.
      const d = Math.hypot(x - cx, y - (apexY + lesionR * 0.6));
      if (d < lesionR) v -= 900 * (1 - (d / lesionR) ** 2);
      v += rnd.between(-40, 40);
      values[y * width + x] = Math.max(0, Math.min(4095, Math.round(v)));
    }
  }
  return { width, height, values };
}

/** The film as 8-bit grayscale (12 → 8 bits). */
export function eightBit(f: DrawnFilm): Buffer {
  const out = Buffer.alloc(f.values.length);
  for (let i = 0; i < f.values.length; i++) out[i] = f.values[i]! >> 4;
  return out;
}

export async function filmPng(f: DrawnFilm): Promise<Buffer> {
  return sharp(eightBit(f), { raw: { width: f.width, height: f.height, channels: 1 } }).png().toBuffer();
}

/** A JPEG carrying an EXIF block (camera, comment) that the upload must strip. */
export async function filmJpeg(f: DrawnFilm, quality = 90): Promise<Buffer> {
  return sharp(eightBit(f), { raw: { width: f.width, height: f.height, channels: 1 } })
    .jpeg({ quality })
    .withExif({ IFD0: { Make: 'Invented Sensor Co', ImageDescription: 'Patient Quill R test exif' } })
    .toBuffer();
}

// ------------------------------------------------------------------------------------------------
// DICOM, written byte by byte (DICOM PS3.5 §7 data elements, PS3.10 §7 file format)

export const TS = {
  implicitLE: '1.2.840.10008.1.2',
  explicitLE: '1.2.840.10008.1.2.1',
  jpegLossless57: '1.2.840.10008.1.2.4.57',
  jpegLossless70: '1.2.840.10008.1.2.4.70',
  jpeg2000: '1.2.840.10008.1.2.4.90',
  bigEndian: '1.2.840.10008.1.2.2',
} as const;

export interface DicomOptions {
  transferSyntax?: string;
  patientName?: string;
  patientId?: string;
  /** Pixel Spacing (0028,0030) row\column in mm. */
  pixelSpacing?: [number, number];
  /** Imager Pixel Spacing (0018,1164) row\column in mm. */
  imagerPixelSpacing?: [number, number];
  acquisitionDate?: string;
  studyDate?: string;
  modality?: string;
  windowCenter?: number;
  windowWidth?: number;
  rescaleSlope?: number;
  rescaleIntercept?: number;
  photometric?: 'MONOCHROME1' | 'MONOCHROME2';
  /** Replace the pixel data's bytes (for a compressed syntax the test does not encode). */
  pixelBytes?: Uint8Array;
}

const LONG_VRS = new Set(['OB', 'OW', 'OF', 'SQ', 'UT', 'UN']);

class Bytes {
  private chunks: Buffer[] = [];
  push(b: Buffer | Uint8Array) {
    this.chunks.push(Buffer.from(b.buffer, b.byteOffset, b.byteLength));
  }
  u16(v: number) {
    const b = Buffer.alloc(2);
    b.writeUInt16LE(v);
    this.push(b);
  }
  u32(v: number) {
    const b = Buffer.alloc(4);
    b.writeUInt32LE(v >>> 0);
    this.push(b);
  }
  get length() {
    return this.chunks.reduce((s, c) => s + c.length, 0);
  }
  buffer() {
    return Buffer.concat(this.chunks);
  }
}

function pad(value: Buffer, vr: string): Buffer {
  if (value.length % 2 === 0) return value;
  return Buffer.concat([value, Buffer.from([vr === 'UI' || vr === 'OB' ? 0 : 0x20])]);
}

function element(out: Bytes, explicit: boolean, group: number, elem: number, vr: string, value: Buffer, undefinedLength = false) {
  const v = undefinedLength ? value : pad(value, vr);
  out.u16(group);
  out.u16(elem);
  const len = undefinedLength ? 0xffffffff : v.length;
  if (explicit) {
    out.push(Buffer.from(vr, 'ascii'));
    if (LONG_VRS.has(vr)) {
      out.u16(0);
      out.u32(len);
    } else out.u16(len);
  } else out.u32(len);
  out.push(v);
}

const str = (s: string) => Buffer.from(s, 'latin1');
const us = (v: number) => {
  const b = Buffer.alloc(2);
  b.writeUInt16LE(v);
  return b;
};

/** A DICOM file of the film, in the transfer syntax asked (uncompressed or JPEG Lossless). */
export function filmDicom(f: DrawnFilm, o: DicomOptions = {}): Buffer {
  const ts = o.transferSyntax ?? TS.explicitLE;
  const explicit = ts !== TS.implicitLE;
  const sopInstance = `2.25.${BigInt('0x' + Buffer.from(`${f.width}x${f.height}${o.patientId ?? ''}${ts}`).toString('hex').slice(0, 30))}`;

  const meta = new Bytes();
  element(meta, true, 0x0002, 0x0001, 'OB', Buffer.from([0, 1]));
  element(meta, true, 0x0002, 0x0002, 'UI', str('1.2.840.10008.5.1.4.1.1.1.3')); // Digital Intra-Oral X-Ray Image Storage – For Presentation
  element(meta, true, 0x0002, 0x0003, 'UI', str(sopInstance));
  element(meta, true, 0x0002, 0x0010, 'UI', str(ts));
  element(meta, true, 0x0002, 0x0012, 'UI', str('2.25.1234567890'));
  const metaBytes = meta.buffer();

  const body = new Bytes();
  const el = (g: number, e: number, vr: string, v: Buffer, undef = false) => element(body, explicit, g, e, vr, v, undef);
  if (o.studyDate) el(0x0008, 0x0020, 'DA', str(o.studyDate));
  if (o.acquisitionDate) el(0x0008, 0x0022, 'DA', str(o.acquisitionDate));
  el(0x0008, 0x0060, 'CS', str(o.modality ?? 'IO'));
  if (o.patientName !== undefined) el(0x0010, 0x0010, 'PN', str(o.patientName));
  if (o.patientId !== undefined) el(0x0010, 0x0020, 'LO', str(o.patientId));
  if (o.imagerPixelSpacing) el(0x0018, 0x1164, 'DS', str(o.imagerPixelSpacing.join('\\')));
  el(0x0028, 0x0002, 'US', us(1));
  el(0x0028, 0x0004, 'CS', str(o.photometric ?? 'MONOCHROME2'));
  el(0x0028, 0x0010, 'US', us(f.height));
  el(0x0028, 0x0011, 'US', us(f.width));
  if (o.pixelSpacing) el(0x0028, 0x0030, 'DS', str(o.pixelSpacing.join('\\')));
  el(0x0028, 0x0100, 'US', us(16));
  el(0x0028, 0x0101, 'US', us(12));
  el(0x0028, 0x0102, 'US', us(11));
  el(0x0028, 0x0103, 'US', us(0));
  if (o.windowCenter !== undefined) el(0x0028, 0x1050, 'DS', str(String(o.windowCenter)));
  if (o.windowWidth !== undefined) el(0x0028, 0x1051, 'DS', str(String(o.windowWidth)));
  if (o.rescaleIntercept !== undefined) el(0x0028, 0x1052, 'DS', str(String(o.rescaleIntercept)));
  if (o.rescaleSlope !== undefined) el(0x0028, 0x1053, 'DS', str(String(o.rescaleSlope)));

  const compressed = ts !== TS.implicitLE && ts !== TS.explicitLE;
  if (!compressed) {
    const px = o.pixelBytes ?? Buffer.from(f.values.buffer, f.values.byteOffset, f.values.byteLength);
    el(0x7fe0, 0x0010, 'OW', Buffer.from(px));
  } else {
    const frame = o.pixelBytes ? Buffer.from(o.pixelBytes) : encodeJpegLossless(f, ts === TS.jpegLossless57 ? 7 : 1);
    const enc = new Bytes();
    // Basic offset table (empty item), one fragment, sequence delimiter.
    enc.u16(0xfffe);
    enc.u16(0xe000);
    enc.u32(0);
    const fragment = pad(frame, 'OB');
    enc.u16(0xfffe);
    enc.u16(0xe000);
    enc.u32(fragment.length);
    enc.push(fragment);
    enc.u16(0xfffe);
    enc.u16(0xe0dd);
    enc.u32(0);
    el(0x7fe0, 0x0010, 'OB', enc.buffer(), true);
  }

  const out = new Bytes();
  out.push(Buffer.alloc(128));
  out.push(str('DICM'));
  element(out, true, 0x0002, 0x0000, 'UL', (() => {
    const b = Buffer.alloc(4);
    b.writeUInt32LE(metaBytes.length);
    return b;
  })());
  out.push(metaBytes);
  out.push(body.buffer());
  return out.buffer();
}

/**
 * JPEG Lossless, process 14 (ITU-T T.81 Annex H): one component, 12-bit precision, predictor 1
 * (left) or 7 ((left + above) / 2), point transform 0, one Huffman table giving every difference
 * category a 5-bit code.
 */
export function encodeJpegLossless(f: DrawnFilm, predictor: 1 | 7 = 1, precision = 12): Buffer {
  const { width, height, values } = f;
  const out: number[] = [0xff, 0xd8];
  const seg = (marker: number, payload: number[]) => out.push(0xff, marker, (payload.length + 2) >> 8, (payload.length + 2) & 0xff, ...payload);
  seg(0xc3, [precision, height >> 8, height & 0xff, width >> 8, width & 0xff, 1, 1, 0x11, 0]);
  const counts = new Array(16).fill(0);
  counts[4] = 17; // 17 symbols (categories 0–16), all 5 bits long
  seg(0xc4, [0x00, ...counts, ...Array.from({ length: 17 }, (_, i) => i)]);
  seg(0xda, [1, 1, 0x00, predictor, 0, 0]);

  let acc = 0;
  let nbits = 0;
  const bytes: number[] = [];
  const put = (code: number, len: number) => {
    for (let i = len - 1; i >= 0; i--) {
      acc = (acc << 1) | ((code >> i) & 1);
      nbits++;
      if (nbits === 8) {
        bytes.push(acc);
        if (acc === 0xff) bytes.push(0);
        acc = 0;
        nbits = 0;
      }
    }
  };
  const at = (x: number, y: number) => values[y * width + x]!;
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let pred: number;
      if (x === 0 && y === 0) pred = 1 << (precision - 1);
      else if (y === 0) pred = at(x - 1, 0);
      else if (x === 0) pred = at(0, y - 1);
      else pred = predictor === 1 ? at(x - 1, y) : (at(x - 1, y) + at(x, y - 1)) >> 1;
      const diff = at(x, y) - pred;
      const mag = Math.abs(diff);
      const ssss = mag === 0 ? 0 : 32 - Math.clz32(mag);
      put(ssss, 5);
      if (ssss > 0 && ssss < 16) put(diff > 0 ? diff : (diff - 1) & ((1 << ssss) - 1), ssss);
    }
  }
  if (nbits > 0) {
    const rest = 8 - nbits;
    put((1 << rest) - 1, rest);
  }
  for (const b of bytes) out.push(b);
  out.push(0xff, 0xd9);
  return Buffer.from(out);
}

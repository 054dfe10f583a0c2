import { readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { DicomReadError, dicomDate, hasDicomPreamble, readDicom, readDicomTags, toEightBit, transferSyntaxLabel } from '@/lib/films/dicom';
import { TS, drawRadiograph, filmDicom } from '../../support/film-fixtures';

const fixture = (name: string) => new Uint8Array(readFileSync(path.join(import.meta.dirname, '../../support/films', name)));
const film = drawRadiograph(48, 32, 5);
const who = { patientName: 'Ashdown^Wren', patientId: 'T-0001', acquisitionDate: '20250310', modality: 'IO' };

/** The film's 12-bit values scaled min–max to 8 bits: what a DICOM without a window must render. */
function minMax8(values: Uint16Array): Uint8Array {
  let min = Infinity;
  let max = -Infinity;
  for (const v of values) {
    min = Math.min(min, v);
    max = Math.max(max, v);
  }
  return Uint8Array.from(values, (v) => Math.round(((v - min) / (max - min)) * 255));
}

function problemOf(fn: () => unknown): string | null {
  try {
    fn();
    return null;
  } catch (e) {
    return e instanceof DicomReadError ? e.problem : `not a DicomReadError: ${String(e)}`;
  }
}

describe('DICOM transfer syntaxes (UIDs and names: DICOM PS3.6 Annex A)', () => {
  it.each([
    ['implicit VR little endian', TS.implicitLE, 'Implicit VR Little Endian'],
    ['explicit VR little endian', TS.explicitLE, 'Explicit VR Little Endian'],
    ['JPEG lossless process 14 (predictor 7 in the test encoder)', TS.jpegLossless57, 'JPEG Lossless, Non-Hierarchical (Process 14)'],
    ['JPEG lossless first-order prediction', TS.jpegLossless70, 'JPEG Lossless, Non-Hierarchical, First-Order Prediction (Process 14 [Selection Value 1])'],
  ])('%s: reads the tags and decodes the pixels exactly', (_, ts, name) => {
    const { film: tags, image } = readDicom(new Uint8Array(filmDicom(film, { ...who, transferSyntax: ts, pixelSpacing: [0.02, 0.025] })));
    expect(tags).toMatchObject({ transferSyntaxUid: ts, transferSyntaxName: name, rows: 32, columns: 48, modality: 'IO' });
    expect(image).toMatchObject({ width: 48, height: 32, channels: 1 });
    expect(Array.from(image.pixels)).toEqual(Array.from(minMax8(film.values)));
  });

  it('refuses every other syntax by its name and UID', () => {
    const cases: [string, string][] = [
      [TS.jpeg2000, 'JPEG 2000 Image Compression (Lossless Only) (1.2.840.10008.1.2.4.90)'],
      [TS.bigEndian, 'Explicit VR Big Endian (1.2.840.10008.1.2.2)'],
      ['1.2.840.10008.1.2.4.50', 'JPEG Baseline (Process 1) (1.2.840.10008.1.2.4.50)'],
      ['1.2.840.10008.1.2.5', 'RLE Lossless (1.2.840.10008.1.2.5)'],
      ['1.2.3.4.5', 'an unknown transfer syntax (1.2.3.4.5)'],
    ];
    for (const [uid, label] of cases) {
      const bytes = new Uint8Array(filmDicom(film, { transferSyntax: uid, pixelBytes: new Uint8Array(16) }));
      expect(() => readDicomTags(bytes)).toThrow(label);
      expect(problemOf(() => readDicom(bytes))).toBe('unsupported_transfer_syntax');
    }
    expect(transferSyntaxLabel('1.2.840.10008.1.2.4.80')).toBe('JPEG-LS Lossless Image Compression (1.2.840.10008.1.2.4.80)');
  });
});

describe('DICOM tags Lamina keeps', () => {
  it('Pixel Spacing (0028,0030) wins over Imager Pixel Spacing (0018,1164); row then column', () => {
    const both = readDicomTags(new Uint8Array(filmDicom(film, { pixelSpacing: [0.02, 0.025], imagerPixelSpacing: [0.03, 0.03] })));
    expect([both.pixelSpacingMm, both.spacingSource]).toEqual([[0.02, 0.025], 'pixel_spacing']);
    const imager = readDicomTags(new Uint8Array(filmDicom(film, { imagerPixelSpacing: [0.03, 0.035] })));
    expect([imager.pixelSpacingMm, imager.spacingSource]).toEqual([[0.03, 0.035], 'imager_pixel_spacing']);
    const none = readDicomTags(new Uint8Array(filmDicom(film, {})));
    expect([none.pixelSpacingMm, none.spacingSource]).toEqual([null, 'none']);
    // A nonsense spacing (zero, negative, metres instead of mm) counts as none.
    expect(readDicomTags(new Uint8Array(filmDicom(film, { pixelSpacing: [0, 0.02] }))).spacingSource).toBe('none');
    expect(readDicomTags(new Uint8Array(filmDicom(film, { pixelSpacing: [-0.02, 0.02] }))).spacingSource).toBe('none');
  });

  it('acquisition date, else study date; the patient name and id as written; modality', () => {
    const t = readDicomTags(new Uint8Array(filmDicom(film, { ...who, studyDate: '20250301' })));
    expect(t).toMatchObject({ acquisitionDate: '2025-03-10', patientName: 'Ashdown^Wren', patientId: 'T-0001', modality: 'IO' });
    expect(readDicomTags(new Uint8Array(filmDicom(film, { studyDate: '20250301' }))).acquisitionDate).toBe('2025-03-01');
    expect(readDicomTags(new Uint8Array(filmDicom(film, {}))).patientName).toBeNull();
  });

  it('DA values: only real days', () => {
    expect(dicomDate('20240229')).toBe('2024-02-29');
    expect(dicomDate('20250229')).toBeNull();
    expect(dicomDate('2025-03-01')).toBeNull();
    expect(dicomDate('')).toBeNull();
    expect(dicomDate(undefined)).toBeNull();
  });

  it('the committed fixtures read as their names say', () => {
    expect(readDicomTags(fixture('explicit-le.dcm')).transferSyntaxUid).toBe(TS.explicitLE);
    expect(readDicomTags(fixture('implicit-le.dcm')).spacingSource).toBe('imager_pixel_spacing');
    expect(readDicom(fixture('jpeg-lossless-57.dcm')).image.width).toBe(160);
    expect(readDicom(fixture('jpeg-lossless-70.dcm')).film.pixelSpacingMm).toEqual([0.019, 0.021]);
    expect(problemOf(() => readDicom(fixture('jpeg2000.dcm')))).toBe('unsupported_transfer_syntax');
  });
});

describe('broken DICOM files', () => {
  const whole = filmDicom(film, { ...who, pixelSpacing: [0.02, 0.02] });
  it('the preamble and DICM marker (DICOM PS3.10 §7.1)', () => {
    expect(hasDicomPreamble(new Uint8Array(whole))).toBe(true);
    expect(hasDicomPreamble(new Uint8Array(whole.subarray(0, 131)))).toBe(false);
    const noMarker = Buffer.from(whole);
    noMarker.write('DICX', 128, 'latin1');
    expect(hasDicomPreamble(new Uint8Array(noMarker))).toBe(false);
  });

  it.each([200, 400, 700, whole.length - 1, whole.length - 500])('cut at %i bytes → truncated', (cut) => {
    expect(problemOf(() => readDicom(new Uint8Array(whole.subarray(0, cut))))).toBe('truncated');
  });

  it('a damaged header → corrupt', () => {
    const damaged = Buffer.from(whole);
    damaged.fill(0xab, 140, 220);
    expect(problemOf(() => readDicom(new Uint8Array(damaged)))).toBe('corrupt');
  });

  it('a damaged JPEG Lossless frame → truncated or corrupt, never a crash', () => {
    const jl = Buffer.from(filmDicom(film, { transferSyntax: TS.jpegLossless70 }));
    const cut = jl.subarray(0, jl.length - 600);
    expect(['truncated', 'corrupt']).toContain(problemOf(() => readDicom(new Uint8Array(cut))));
  });
});

describe('8-bit display values (DICOM PS3.3 C.11.2.1.2.1, linear VOI function)', () => {
  const base = { bitsStored: 12, signed: false, slope: 1, intercept: 0, invert: false };
  it('a window of centre 2048, width 4096 over 0…4095', () => {
    // y = ((x − (c − 0.5)) / (w − 1) + 0.5) · 255, clipped at c − 0.5 ∓ (w − 1)/2.
    const out = toEightBit(Uint16Array.from([0, 1024, 2048, 3072, 4095]), { ...base, windowCenter: 2048, windowWidth: 4096 });
    const expected = [0, 1024, 2048, 3072, 4095].map((x) => {
      const lo = 2048 - 0.5 - 4095 / 2;
      const hi = 2048 - 0.5 + 4095 / 2;
      return x <= lo ? 0 : x > hi ? 255 : Math.round(((x - 2047.5) / 4095 + 0.5) * 255);
    });
    expect(Array.from(out)).toEqual(expected);
    expect(out[0]).toBe(0);
    expect(out[4]).toBe(255);
  });

  it('a narrow window clips both ends', () => {
    // c = 1050, w = 100: black at or below 1049.5 − 49.5 = 1000, white above 1049.5 + 49.5 = 1099;
    // 1001 → ((1001 − 1049.5)/99 + 0.5)·255 = 2.6 → 3; 1050 → (0.5/99 + 0.5)·255 = 128.8 → 129.
    expect(Array.from(toEightBit(Uint16Array.from([0, 1000, 1001, 1050, 1099, 1100]), { ...base, windowCenter: 1050, windowWidth: 100 }))).toEqual([0, 0, 3, 129, 255, 255]);
  });

  it('rescale slope and intercept come first; without a window, min–max', () => {
    expect(Array.from(toEightBit(Uint16Array.from([10, 20, 30]), { ...base, slope: 2, intercept: -1000 }))).toEqual([0, 128, 255]);
    // Modality values −980, −960, −940 under c = −960, w = 41 (black ≤ −980.5, white > −940.5):
    // −980 → ((−980 + 960.5)/40 + 0.5)·255 = 3.2 → 3; −960 → (0.5/40 + 0.5)·255 = 130.7 → 131.
    expect(Array.from(toEightBit(Uint16Array.from([10, 20, 30]), { ...base, slope: 2, intercept: -1000, windowCenter: -960, windowWidth: 41 }))).toEqual([3, 131, 255]);
  });

  it('MONOCHROME1 is inverted; a flat image is black; signed values are sign-extended', () => {
    expect(Array.from(toEightBit(Uint16Array.from([0, 4095]), { ...base, invert: true }))).toEqual([255, 0]);
    expect(Array.from(toEightBit(Uint16Array.from([7, 7]), base))).toEqual([0, 0]);
    // 12-bit two's complement: 0xFFF is −1, 0x800 is −2048.
    expect(Array.from(toEightBit(Uint16Array.from([0x800, 0xfff, 0x7ff]), { ...base, signed: true }))).toEqual([0, 127, 255]); // (−1 + 2048) / 4095 · 255 = 127.5 − 0.03
  });

  it('MONOCHROME1 through the whole read', () => {
    const { image } = readDicom(new Uint8Array(filmDicom(film, { photometric: 'MONOCHROME1' })));
    expect(Array.from(image.pixels)).toEqual(Array.from(minMax8(film.values), (v) => 255 - v));
  });
});

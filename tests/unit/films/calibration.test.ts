import { describe, expect, it } from 'vitest';
import {
  CalibrationError,
  originalToRendition,
  pixelAspect,
  renditionToOriginal,
  scaleFromDrawnLength,
  scaleFromPixelSpacing,
} from '@/lib/films/calibration';
import { distanceMm, lesionFigures, polygonAreaMm2, polygonAreaPx, roundTenth } from '@/lib/films/measure';
import { FilmCalibrationInput } from '@/lib/schemas/film';

describe('scale from DICOM pixel spacing', () => {
  // DICOM PS3.3 §10.7.1.3 (from memory): Pixel Spacing = row spacing (y) \ column spacing (x).
  it('reads the pair as [row, column]: x is the second value, y the first', () => {
    expect(scaleFromPixelSpacing([0.2, 0.1])).toEqual({ mmPerPxX: 0.1, mmPerPxY: 0.2 });
  });
  it('square pixels give the same scale both ways', () => {
    expect(scaleFromPixelSpacing([0.035, 0.035])).toEqual({ mmPerPxX: 0.035, mmPerPxY: 0.035 });
  });
  it.each([[[0, 0.1]], [[0.1, -1]], [[Number.NaN, 0.1]]] as [[number, number]][])('refuses %j', (spacing) => {
    expect(() => scaleFromPixelSpacing(spacing)).toThrow(CalibrationError);
  });
  // Non-square pixels: a horizontal step of 10 px is 10 × column spacing, a vertical one 10 × row spacing (PS3.3, as above).
  it('measures each axis with its own spacing', () => {
    const s = scaleFromPixelSpacing([0.2, 0.1]);
    expect(distanceMm({ x: 0, y: 0 }, { x: 10, y: 0 }, s)).toBeCloseTo(1, 12);
    expect(distanceMm({ x: 0, y: 0 }, { x: 0, y: 10 }, s)).toBeCloseTo(2, 12);
  });
  it('pixel aspect is row ÷ column spacing, square without a spacing (common practice)', () => {
    expect(pixelAspect([0.2, 0.1])).toBe(2);
    expect(pixelAspect(null)).toBe(1);
  });
});

describe('scale from a known length drawn on the film (common practice: mm ÷ drawn pixels)', () => {
  it('a 25 mm file drawn over 500 px is 0.05 mm per pixel', () => {
    expect(scaleFromDrawnLength({ x: 100, y: 100 }, { x: 600, y: 100 }, 25)).toEqual({ mmPerPxX: 0.05, mmPerPxY: 0.05 });
  });
  it('a diagonal 3-4-5 line: 21 mm over 300 px × 400 px (500 px) is 0.042 mm per pixel', () => {
    const s = scaleFromDrawnLength({ x: 0, y: 0 }, { x: 300, y: 400 }, 21);
    expect(s.mmPerPxX).toBeCloseTo(0.042, 12);
    expect(distanceMm({ x: 0, y: 0 }, { x: 300, y: 400 }, s)).toBeCloseTo(21, 12);
  });
  it('with non-square pixels (aspect 2) the drawn line still measures its known length', () => {
    const s = scaleFromDrawnLength({ x: 10, y: 10 }, { x: 110, y: 60 }, 12, 2);
    expect(s.mmPerPxY).toBeCloseTo(2 * s.mmPerPxX, 12);
    expect(distanceMm({ x: 10, y: 10 }, { x: 110, y: 60 }, s)).toBeCloseTo(12, 12);
  });
  it.each([
    [{ x: 0, y: 0 }, { x: 5, y: 5 }, 10, /at least 10 pixels/],
    [{ x: 0, y: 0 }, { x: 100, y: 0 }, 0, /positive/],
    [{ x: 0, y: 0 }, { x: 100, y: 0 }, 150, /at most 100 mm/],
    // a subnormal length would give 0 mm per pixel (the route fuzzer's counterexample: 2e-323 over 36 px)
    [{ x: 2, y: 5 }, { x: 38, y: 5 }, 2e-323, /at least 0.5 mm/],
    [{ x: 0, y: 0 }, { x: 100, y: 0 }, 0.4, /at least 0.5 mm/],
    [{ x: 0, y: 0 }, { x: Number.POSITIVE_INFINITY, y: 0 }, 10, /finite/],
  ])('refuses %j → %j over %s mm', (a, b, mm, message) => {
    expect(() => scaleFromDrawnLength(a, b, mm)).toThrow(message);
  });
});

describe('rendition ↔ original pixels', () => {
  const film = { width: 8192, height: 4096, webWidth: 4096, webHeight: 2048 };
  it('scales by original ÷ rendition size each way, and back', () => {
    expect(renditionToOriginal({ x: 100, y: 50 }, film)).toEqual({ x: 200, y: 100 });
    expect(originalToRendition({ x: 200, y: 100 }, film)).toEqual({ x: 100, y: 50 });
  });
});

describe('rounding to 0.1 mm (half up, float noise removed; common practice)', () => {
  it.each([
    [1.44, 1.4],
    [1.45, 1.5],
    [4.35, 4.4],
    [3 * 0.15, 0.5], // 0.44999999999999996 in binary floating point: meant as 0.45
    [2.0000000000000018, 2],
    [0.04, 0],
    [0.05, 0.1],
    [-0.04, 0],
    [12.96, 13],
  ])('%s → %s', (v, r) => {
    expect(Object.is(roundTenth(v), r)).toBe(true);
  });
  it('refuses NaN and infinity', () => {
    expect(() => roundTenth(Number.NaN)).toThrow(RangeError);
    expect(() => roundTenth(Number.POSITIVE_INFINITY)).toThrow(RangeError);
  });
});

describe('outline area (shoelace formula)', () => {
  it('a 10 × 20 px rectangle is 200 px², drawn either way round', () => {
    const r = [
      { x: 0, y: 0 },
      { x: 10, y: 0 },
      { x: 10, y: 20 },
      { x: 0, y: 20 },
    ];
    expect(polygonAreaPx(r)).toBe(200);
    expect(polygonAreaPx([...r].reverse())).toBe(200);
  });
  it('a right triangle with legs 30 and 40 px is 600 px²', () => {
    expect(polygonAreaPx([{ x: 0, y: 0 }, { x: 30, y: 0 }, { x: 0, y: 40 }])).toBe(600);
  });
  it('fewer than three points have no area', () => {
    expect(polygonAreaPx([{ x: 0, y: 0 }, { x: 3, y: 4 }])).toBe(0);
  });
  it('mm² = px² × mmPerPxX × mmPerPxY (non-square pixels)', () => {
    const sq = [{ x: 0, y: 0 }, { x: 100, y: 0 }, { x: 100, y: 100 }, { x: 0, y: 100 }];
    expect(polygonAreaMm2(sq, { mmPerPxX: 0.1, mmPerPxY: 0.2 })).toBeCloseTo(200, 10);
  });
});

describe('lesion figures as stored', () => {
  it('diameter and area rounded to 0.1', () => {
    const scale = { mmPerPxX: 0.05, mmPerPxY: 0.05 };
    const f = lesionFigures({ a: { x: 0, y: 0 }, b: { x: 87, y: 0 } }, [{ x: 0, y: 0 }, { x: 87, y: 0 }, { x: 87, y: 60 }, { x: 0, y: 60 }], scale);
    expect(f).toEqual({ diameterMm: 4.4, areaMm2: 13.1 }); // 4.35 mm; 87 × 60 × 0.0025 = 13.05 mm²
  });
  it('no outline, no area', () => {
    expect(lesionFigures({ a: { x: 0, y: 0 }, b: { x: 30, y: 40 } }, null, { mmPerPxX: 0.1, mmPerPxY: 0.1 })).toEqual({ diameterMm: 5, areaMm2: null });
  });
});

describe('the calibration input (lib/schemas/film.ts)', () => {
  it('refuses a known length under 0.5 mm with a message for the field, not a scale of 0', () => {
    const r = FilmCalibrationInput.safeParse({ source: 'drawn', a: { x: 2, y: 5 }, b: { x: 38, y: 5 }, mm: 2e-323 });
    expect(r.success).toBe(false);
    expect(r.error?.issues.map((i) => [i.path.join('.'), i.message])).toEqual([['mm', 'The known length must be at least 0.5 mm.']]);
    expect(FilmCalibrationInput.safeParse({ source: 'drawn', a: { x: 2, y: 5 }, b: { x: 38, y: 5 }, mm: 0.5 }).success).toBe(true);
  });
});

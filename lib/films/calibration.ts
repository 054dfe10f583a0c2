/**
 * Film calibration (issue 13): how many millimetres one pixel of a film's ORIGINAL image spans,
 * across (x, between columns) and down (y, between rows). Pure, zod-free: the viewer (a client
 * component), the service and the tests import it.
 *
 * Sources:
 * - DICOM PS3.3 §10.7.1.3 (Pixel Spacing value order, from memory of the standard): Pixel Spacing
 *   (0028,0030) and Imager Pixel Spacing (0018,1164) are a pair "row spacing \ column spacing" in mm:
 *   the FIRST value is the distance between the centres of adjacent ROWS (a step down, y), the
 *   SECOND between adjacent COLUMNS (a step across, x). So x = spacing[1], y = spacing[0].
 * - Imager Pixel Spacing is measured at the detector, not in the patient: lengths read with it
 *   include the projection's magnification (a few per cent on an intra-oral film; common practice).
 * - A length drawn on the film over an object of known length (a file, the working length):
 *   mm per pixel = known mm / drawn length in pixels. Pixels are taken as square unless the aspect
 *   (height ÷ width of one pixel) is given; PNG and JPEG files have square pixels (common practice).
 */

/** A point on the original image, in pixels from its top-left corner (x right, y down). */
export interface FilmPoint {
  x: number;
  y: number;
}

export const CALIBRATION_SOURCES = ['dicom', 'drawn'] as const;
export type CalibrationSource = (typeof CALIBRATION_SOURCES)[number];

export const CALIBRATION_SOURCE_LABELS: Record<CalibrationSource, string> = {
  dicom: 'From the DICOM file’s pixel spacing',
  drawn: 'From a known length drawn on the film',
};

/** A known length drawn on the film: its two ends and its true length. */
export interface DrawnReference {
  a: FilmPoint;
  b: FilmPoint;
  mm: number;
}

export interface Scale {
  /** mm per pixel across (between columns). */
  mmPerPxX: number;
  /** mm per pixel down (between rows). */
  mmPerPxY: number;
}

export interface FilmCalibration extends Scale {
  source: CalibrationSource;
  /** The drawn reference (source "drawn" only). */
  reference: DrawnReference | null;
}

/** The shortest drawn reference accepted, in pixels: shorter lines make a poor scale (common practice). */
export const MIN_REFERENCE_PX = 10;
/** The longest known length accepted (mm): no file or tooth is longer (common practice). */
export const MAX_REFERENCE_MM = 100;
/**
 * The shortest known length accepted (mm): nothing shorter can be drawn on a radiograph with any
 * accuracy (common practice). It also keeps the scale a normal number: a length of 1e-320 mm
 * divided by the pixels drawn rounds to 0 mm per pixel (found by the route fuzzer).
 */
export const MIN_REFERENCE_MM = 0.5;

/** The most points an outline may have. */
export const MAX_OUTLINE_POINTS = 500;

export class CalibrationError extends Error {}

const positive = (v: number, what: string) => {
  if (typeof v !== 'number' || !Number.isFinite(v) || v <= 0) throw new CalibrationError(`${what} must be a positive number, got ${String(v)}`);
  return v;
};

/** The scale from a DICOM pixel spacing pair [row spacing, column spacing] (PS3.3 order). */
export function scaleFromPixelSpacing(spacing: readonly [number, number]): Scale {
  if (!Array.isArray(spacing) || spacing.length !== 2) throw new CalibrationError('pixel spacing must be a pair: row spacing, column spacing');
  const [row, col] = spacing;
  return { mmPerPxX: positive(col, 'column spacing'), mmPerPxY: positive(row, 'row spacing') };
}

/**
 * The scale from a known length drawn from a to b. `aspect` is one pixel's height ÷ width (1 for
 * square pixels): with mmPerPxY = aspect · mmPerPxX, the drawn length is
 * mmPerPxX · √(dx² + (aspect·dy)²) = mm.
 */
export function scaleFromDrawnLength(a: FilmPoint, b: FilmPoint, mm: number, aspect = 1): Scale {
  positive(mm, 'the known length');
  if (mm > MAX_REFERENCE_MM) throw new CalibrationError(`the known length must be at most ${MAX_REFERENCE_MM} mm, got ${mm}`);
  if (mm < MIN_REFERENCE_MM) throw new CalibrationError(`the known length must be at least ${MIN_REFERENCE_MM} mm, got ${mm}`);
  positive(aspect, 'the pixel aspect');
  const dx = b.x - a.x;
  const dy = b.y - a.y;
  if (![dx, dy].every(Number.isFinite)) throw new CalibrationError('the reference ends must be finite points');
  const px = Math.hypot(dx, aspect * dy);
  if (Math.hypot(dx, dy) < MIN_REFERENCE_PX) {
    throw new CalibrationError(`draw the known length over at least ${MIN_REFERENCE_PX} pixels of the film (it spans ${Math.hypot(dx, dy).toFixed(1)})`);
  }
  const x = mm / px;
  return { mmPerPxX: x, mmPerPxY: aspect * x };
}

/**
 * The pixel aspect (height ÷ width) a drawn reference should assume for a film: from its DICOM
 * spacing when it has one (row ÷ column), else square.
 */
export function pixelAspect(spacing: readonly [number, number] | null): number {
  if (!spacing) return 1;
  const [row, col] = spacing;
  return row > 0 && col > 0 ? row / col : 1;
}

/**
 * A point on the displayed rendition (at most 4096 px a side, so possibly smaller than the
 * original) mapped to the original's pixels, and back.
 */
export function renditionToOriginal(p: FilmPoint, film: { width: number; height: number; webWidth: number; webHeight: number }): FilmPoint {
  return { x: (p.x * film.width) / film.webWidth, y: (p.y * film.height) / film.webHeight };
}

export function originalToRendition(p: FilmPoint, film: { width: number; height: number; webWidth: number; webHeight: number }): FilmPoint {
  return { x: (p.x * film.webWidth) / film.width, y: (p.y * film.webHeight) / film.height };
}

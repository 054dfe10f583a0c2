/**
 * Measuring on a calibrated film (issue 13): lengths in mm between two points and areas in mm² of
 * an outline, from the film's scale (lib/films/calibration.ts). Pure and zod-free (the viewer uses
 * it live; the service stores what it computes).
 *
 * - Distance: Euclid on the scaled steps, √((dx·mmPerPxX)² + (dy·mmPerPxY)²) — non-square pixels
 *   scale each axis on its own.
 * - Area: the shoelace formula (Gauss's area formula) in pixels, times mmPerPxX · mmPerPxY (a
 *   pixel's area); the outline is closed from the last point back to the first; the sign (the
 *   direction of drawing) is dropped.
 * - Shown and stored to 0.1 mm / 0.1 mm² (the review form's step; a radiograph's precision is no
 *   better, common practice), half away from zero after removing float noise (1.45 → 1.5).
 */
import type { FilmPoint, Scale } from './calibration';

/** Rounds to one decimal (0.1 mm), half up, ignoring binary float noise (1.45 → 1.5; 3 × 0.15 = 0.44999999999999996 → 0.5). */
export function roundTenth(v: number): number {
  if (typeof v !== 'number' || !Number.isFinite(v)) throw new RangeError(`expected a finite number, got ${String(v)}`);
  const tenths = Number((Math.abs(v) * 10).toPrecision(12));
  const r = (Math.sign(v) * Math.round(tenths)) / 10;
  return r === 0 ? 0 : r; // fold -0
}

/** The distance from a to b in mm (unrounded). */
export function distanceMm(a: FilmPoint, b: FilmPoint, scale: Scale): number {
  return Math.hypot((b.x - a.x) * scale.mmPerPxX, (b.y - a.y) * scale.mmPerPxY);
}

/** The shoelace area of a closed outline, in square pixels (≥ 0). Fewer than three points: 0. */
export function polygonAreaPx(points: readonly FilmPoint[]): number {
  if (points.length < 3) return 0;
  let twice = 0;
  for (let i = 0; i < points.length; i++) {
    const p = points[i]!;
    const q = points[(i + 1) % points.length]!;
    twice += p.x * q.y - q.x * p.y;
  }
  return Math.abs(twice) / 2;
}

/** The area of a closed outline in mm² (unrounded). */
export function polygonAreaMm2(points: readonly FilmPoint[], scale: Scale): number {
  return polygonAreaPx(points) * scale.mmPerPxX * scale.mmPerPxY;
}

/** The largest lesion diameter and the outline's area, rounded to 0.1 as stored and shown. */
export function lesionFigures(diameter: { a: FilmPoint; b: FilmPoint }, outline: readonly FilmPoint[] | null, scale: Scale) {
  return {
    diameterMm: roundTenth(distanceMm(diameter.a, diameter.b, scale)),
    areaMm2: outline && outline.length >= 3 ? roundTenth(polygonAreaMm2(outline, scale)) : null,
  };
}

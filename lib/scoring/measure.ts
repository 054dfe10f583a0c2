/**
 * Lamina's rule for measured distances: millimetres are rounded to 0.01 mm
 * before any cut-off is applied, so that a value computed as a difference of
 * two lengths (21.3 - 19.3 = 2.0000000000000018) falls where the clinician
 * meant it to. Values are then compared exactly against the cut-offs.
 */
export function roundMm(mm: number, what: string): number {
  if (typeof mm !== 'number' || !Number.isFinite(mm)) {
    throw new RangeError(`${what} must be a finite number of millimetres, got ${String(mm)}`);
  }
  const r = Math.round(mm * 100) / 100;
  return r === 0 ? 0 : r; // fold -0
}

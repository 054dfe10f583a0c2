/**
 * Fill-length class of a root filling from the distance between the end of
 * the filling and the radiographic apex, in the three classes used by
 * Sjögren et al. (1990, J Endod 16:498–504) and Ng et al. (2008, Int Endod J
 * 41:6–31): within 0–2 mm of the apex, more than 2 mm short, beyond the apex.
 *
 * Input convention: `shortOfApexMm` is positive when the filling ends short of
 * the apex, 0 when flush with it, negative when it extends beyond it.
 * Lamina's rule, after rounding to 0.01 mm (see measure.ts):
 *   beyond  d < 0             (any extension past the apex; -0.01 mm is beyond)
 *   within  0 <= d <= 2.0 mm  (flush and 2.0 mm short are both within; a
 *                              0.5 mm working-length allowance is within)
 *   short   d > 2.0 mm        (2.01 mm short is short)
 */
import { roundMm } from './measure';

export type FillLengthClass = 'within' | 'short' | 'beyond';

export const FILL_LENGTH_LABELS: Readonly<Record<FillLengthClass, string>> = {
  within: 'Within 0–2 mm of the apex',
  short: 'More than 2 mm short of the apex',
  beyond: 'Beyond the apex',
};

/** The largest shortfall (mm) still classed as within. */
export const FILL_WITHIN_MAX_MM = 2;

export function fillLengthClass(shortOfApexMm: number): FillLengthClass {
  const d = roundMm(shortOfApexMm, 'distance from the end of the filling to the apex');
  if (d < 0) return 'beyond';
  if (d <= FILL_WITHIN_MAX_MM) return 'within';
  return 'short';
}

/**
 * Thin wrappers over the stdlib distribution functions, so every test in
 * lib/stats takes its normal and chi-square values from one place.
 * Nothing here is a home-made approximation: the numbers come from
 * @stdlib (normal CDF via erfc, normal quantile via erfinv, chi-square upper
 * tail via the regularised upper incomplete gamma function, which keeps its
 * precision for very small p-values where 1 - cdf would round to 0).
 */
import normalCdf from '@stdlib/stats-base-dists-normal-cdf';
import normalQuantile from '@stdlib/stats-base-dists-normal-quantile';
import gammainc from '@stdlib/math-base-special-gammainc';

/** Checks a confidence level and returns the two-sided normal quantile z(1 - (1 - level)/2). */
export function zForLevel(level: number): number {
  if (typeof level !== 'number' || !(level > 0 && level < 1)) {
    throw new RangeError(`confidence level must be a number strictly between 0 and 1, got ${String(level)}`);
  }
  return normalQuantile(1 - (1 - level) / 2, 0, 1);
}

/** Two-sided p-value of a standard normal statistic: 2 * P(Z > |z|). */
export function twoSidedNormalP(z: number): number {
  if (Number.isNaN(z)) throw new RangeError('normal statistic is NaN');
  return 2 * normalCdf(-Math.abs(z), 0, 1);
}

/** Upper tail P(X >= x) of the chi-square distribution with df degrees of freedom. */
export function chiSquareUpperTail(x: number, df: number): number {
  if (Number.isNaN(x)) throw new RangeError('chi-square statistic is NaN');
  if (df <= 0) return 1; // no degrees of freedom: nothing to test, by convention p = 1
  if (x <= 0) return 1;
  if (x === Infinity) return 0;
  return gammainc(x / 2, df / 2, true, true);
}

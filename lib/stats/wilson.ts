import { zForLevel } from './distributions';

export interface ProportionInterval {
  estimate: number;
  lower: number;
  upper: number;
}

/**
 * Wilson score interval for a binomial proportion, without continuity
 * correction (Wilson 1927; method 3 of Newcombe 1998). It is the interval
 * R's prop.test(x, n, correct = FALSE) reports. At 0 successes the lower
 * bound is exactly 0 and at n successes the upper bound is exactly 1.
 */
export function wilsonInterval(successes: number, n: number, level = 0.95): ProportionInterval {
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`n must be a whole number >= 1, got ${String(n)}`);
  if (!Number.isInteger(successes) || successes < 0 || successes > n) {
    throw new RangeError(`successes must be a whole number from 0 to n (${n}), got ${String(successes)}`);
  }
  const z = zForLevel(level);
  const p = successes / n;
  const z22n = (z * z) / (2 * n);
  const half = z * Math.sqrt((p * (1 - p)) / n + z22n / (2 * n));
  const lower = successes === 0 ? 0 : (p + z22n - half) / (1 + 2 * z22n);
  const upper = successes === n ? 1 : (p + z22n + half) / (1 + 2 * z22n);
  return { estimate: p, lower, upper };
}

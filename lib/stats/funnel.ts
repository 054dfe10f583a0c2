import factorialln from '@stdlib/math-base-special-factorialln';

export interface FunnelLimits {
  /** lower control limit for the observed proportion */
  lower: number;
  /** upper control limit for the observed proportion */
  upper: number;
}

/**
 * Binomial CDF values F(0..n) for n trials with probability p0, by summing the
 * probability mass (each term from log-gamma, so large n does not overflow).
 */
function binomialCdf(n: number, p0: number): Float64Array {
  const cdf = new Float64Array(n + 1);
  const lp = Math.log(p0);
  const lq = Math.log1p(-p0);
  const lnf = factorialln(n);
  let sum = 0;
  for (let k = 0; k <= n; k++) {
    sum += Math.exp(lnf - factorialln(k) - factorialln(n - k) + k * lp + (n - k) * lq);
    cdf[k] = sum;
  }
  return cdf;
}

/**
 * The interpolated binomial quantile of Spiegelhalter (2005), Appendix A.1.1:
 * r_p is the smallest r with F(r) >= p, alpha = (F(r_p) - p) / (F(r_p) - F(r_p - 1)),
 * and the limit is (r_p - alpha) / n, which moves smoothly with n instead of in
 * steps of 1/n.
 */
function interpolatedLimit(cdf: Float64Array, n: number, p: number): number {
  let r = 0;
  while (r < n && cdf[r] < p) r++;
  const below = r === 0 ? 0 : cdf[r - 1];
  const alpha = (cdf[r] - p) / (cdf[r] - below);
  return Math.min(1, Math.max(0, (r - alpha) / n));
}

/**
 * Funnel-plot control limits for a proportion with target p0 among n cases
 * (Spiegelhalter DJ 2005, Funnel plots for comparing institutional performance,
 * Stat Med 24:1185–1202): the exact binomial (1 - coverage)/2 and
 * 1 - (1 - coverage)/2 quantiles of X/n, X ~ Bin(n, p0), interpolated between
 * the integer counts. coverage 0.95 gives the "2 SD" limits, 0.998 the "3 SD"
 * ones. Limits are clipped to [0, 1] (at p0 near 0 or 1 the interpolation can
 * step just outside).
 */
export function funnelLimits(p0: number, n: number, coverage: number): FunnelLimits {
  if (typeof p0 !== 'number' || !(p0 > 0 && p0 < 1)) throw new RangeError(`funnelLimits: p0 must be strictly between 0 and 1, got ${String(p0)}`);
  if (!Number.isInteger(n) || n < 1) throw new RangeError(`funnelLimits: n must be a whole number >= 1, got ${String(n)}`);
  if (n > 10_000_000) throw new RangeError(`funnelLimits: n above 10,000,000 is not supported, got ${n}`);
  if (typeof coverage !== 'number' || !(coverage > 0 && coverage < 1)) {
    throw new RangeError(`funnelLimits: coverage must be strictly between 0 and 1 (e.g. 0.95 or 0.998), got ${String(coverage)}`);
  }
  const cdf = binomialCdf(n, p0);
  const tail = (1 - coverage) / 2;
  return { lower: interpolatedLimit(cdf, n, tail), upper: interpolatedLimit(cdf, n, 1 - tail) };
}

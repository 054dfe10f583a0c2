import { zForLevel } from './distributions';
import { IN_PLACE_HIST_LENGTH, checkObservation, radixSortInPlace } from './internal';

export interface SurvivalObservation {
  time: number;
  /** true: the event was seen at `time`; false: censored at `time` */
  event: boolean;
}

export type ConfType = 'log' | 'log-log' | 'plain';

export interface KaplanMeierOptions {
  /** confidence level of the pointwise interval, default 0.95 */
  level?: number;
  /** scale of the pointwise interval, default 'log' (as R's survfit) */
  confType?: ConfType;
}

/** One row per distinct observed time, as in R's survfit / summary(fit, censored = TRUE). */
export interface KaplanMeierStep {
  time: number;
  nRisk: number;
  nEvent: number;
  nCensor: number;
  survival: number;
  lower: number;
  upper: number;
}

const confTypeOf = new WeakMap<readonly KaplanMeierStep[], ConfType>();

/**
 * R-style bounds: NaN where R's survfit gives NA (S = 0 on the log and log-log
 * scales, S = 1 on the log-log scale, S = 0 with infinite variance on the plain scale).
 */
function rBounds(s: number, se: number, z: number, confType: ConfType, out: Float64Array): void {
  if (confType === 'plain') {
    const se2 = se * s * z;
    if (Number.isNaN(se2)) {
      out[0] = NaN;
      out[1] = NaN;
    } else {
      out[0] = Math.max(s - se2, 0);
      out[1] = Math.min(s + se2, 1);
    }
  } else if (confType === 'log') {
    if (s === 0) {
      out[0] = NaN;
      out[1] = NaN;
    } else {
      // exp(log(s) -/+ z se) as R writes it, with one exp: s / e and s * e
      const e = Math.exp(z * se);
      out[0] = s / e;
      out[1] = Math.min(s * e, 1);
    }
  } else if (s === 0 || s === 1) {
    out[0] = NaN;
    out[1] = NaN;
  } else {
    const se2 = (z * se) / Math.log(s);
    const ll = Math.log(-Math.log(s));
    out[0] = Math.exp(-Math.exp(ll - se2));
    out[1] = Math.exp(-Math.exp(ll + se2));
  }
}

/**
 * One distinct event time's term of Greenwood's sum for var(log S): d / (n (n - d)) for d events
 * among n at risk (d > 0); infinite when every one at risk has the event (S falls to 0).
 */
function greenwoodTerm(nRisk: number, nEvent: number): number {
  return nRisk === nEvent ? Infinity : nEvent / (nRisk * (nRisk - nEvent));
}

function checkConfType(confType: unknown): ConfType {
  if (confType !== 'log' && confType !== 'log-log' && confType !== 'plain') {
    throw new RangeError(`confType must be 'log', 'log-log' or 'plain', got ${String(confType)}`);
  }
  return confType;
}

/**
 * Kaplan–Meier product-limit estimate with Greenwood's variance, following R's
 * survival::survfit: an observation censored at an event time is counted at
 * risk at that time; the default interval is on the log scale, capped at 1.
 * Where R reports NA for a bound (S = 0, or S = 1 on the log-log scale) Lamina
 * returns the estimate itself as both bounds, so no row ever holds NaN.
 *
 * O(n log n) or better: the event times and the censoring times are each
 * sorted once (a linear-time radix sort on typed arrays, in place in one
 * buffer) and merged.
 */
export function kaplanMeier(obs: readonly SurvivalObservation[], opts: KaplanMeierOptions = {}): KaplanMeierStep[] {
  const level = opts.level ?? 0.95;
  const confType = checkConfType(opts.confType ?? 'log');
  const z = zForLevel(level);
  if (!Array.isArray(obs)) throw new TypeError('kaplanMeier expects an array of { time, event }');
  const n = obs.length;
  // one pass over the input objects: event times fill the buffer from the
  // front, censoring times from the back
  const buf = new Float64Array(n);
  let nev = 0;
  let back = n;
  for (let i = 0; i < n; i++) {
    const o = obs[i];
    if (o === null || typeof o !== 'object') throw new TypeError(`observation ${i}: expected { time, event }`);
    const t = o.time;
    const e = o.event;
    if (typeof t !== 'number' || !(t >= 0) || t === Infinity || (e !== true && e !== false)) {
      checkObservation(t, e, `observation ${i}`);
    }
    // + 0 folds -0 to +0 (the radix sort orders bit patterns)
    if (e) buf[nev++] = t + 0;
    else buf[--back] = t + 0;
  }
  // both halves sorted in place, sharing one scratch buffer and one histogram
  const ev = buf.subarray(0, nev);
  const ce = buf.subarray(nev);
  const scratch = new Float64Array(Math.max(nev, n - nev));
  const hist = new Int32Array(IN_PLACE_HIST_LENGTH);
  radixSortInPlace(ev, scratch, hist);
  radixSortInPlace(ce, scratch, hist);
  const steps: KaplanMeierStep[] = [];
  const bounds = new Float64Array(2);
  let i = 0;
  let j = 0;
  let atRisk = n;
  let s = 1;
  let greenwood = 0;
  let lower = 1;
  let upper = 1;
  const ne = ev.length;
  const nc = ce.length;
  while (i < ne || j < nc) {
    const t = i < ne && (j >= nc || ev[i] <= ce[j]) ? ev[i] : ce[j];
    let d = 0;
    while (i < ne && ev[i] === t) {
      d++;
      i++;
    }
    let c = 0;
    while (j < nc && ce[j] === t) {
      c++;
      j++;
    }
    // censoring-only rows keep the previous S and bounds (S and its variance are unchanged)
    if (d > 0) {
      s *= (atRisk - d) / atRisk;
      greenwood += greenwoodTerm(atRisk, d);
      rBounds(s, Math.sqrt(greenwood), z, confType, bounds);
      lower = Number.isNaN(bounds[0]) ? s : bounds[0];
      upper = Number.isNaN(bounds[1]) ? s : bounds[1];
    }
    steps.push({ time: t, nRisk: atRisk, nEvent: d, nCensor: c, survival: s, lower, upper });
    atRisk -= d + c;
  }
  confTypeOf.set(steps, confType);
  return steps;
}

export interface MedianSurvival {
  /** null where the curve does not fall to 0.5 */
  median: number | null;
  lower: number | null;
  upper: number | null;
}

function checkSteps(steps: readonly KaplanMeierStep[]): void {
  if (!Array.isArray(steps)) throw new TypeError('expected the rows returned by kaplanMeier');
  let prev = -Infinity;
  for (let k = 0; k < steps.length; k++) {
    const r = steps[k];
    if (!r || !(r.time > prev) || !Number.isFinite(r.survival) || !(r.nRisk >= r.nEvent) || r.nEvent < 0) {
      throw new RangeError(`step ${k} is not a Kaplan–Meier row in increasing time order`);
    }
    prev = r.time;
  }
}

/**
 * R's rule for the median (survival:::survmean, used by print(survfit)): the
 * first time the curve is at or below 0.5; when the curve sits exactly at 0.5
 * (within sqrt(machine epsilon)) and later drops below, the midpoint between
 * that time and the time of the next drop.
 */
function firstAtOrBelowHalf(y: Float64Array, x: readonly KaplanMeierStep[]): number | null {
  const tol = Math.sqrt(Number.EPSILON);
  let first = -1;
  for (let k = 0; k < y.length; k++) {
    if (!Number.isNaN(y[k]) && y[k] < 0.5 + tol) {
      first = k;
      break;
    }
  }
  if (first < 0) return null;
  if (Math.abs(y[first] - 0.5) < tol) {
    for (let k = first + 1; k < y.length; k++) {
      if (!Number.isNaN(y[k]) && y[k] < 0.5 + tol && y[k] < y[first]) return (x[first].time + x[k].time) / 2;
    }
  }
  return x[first].time;
}

/**
 * Median survival time with its confidence interval, as R's
 * print(survfit(...)) reports it: the interval ends are where the lower and
 * upper pointwise bands cross 0.5. The bands are recomputed from the rows'
 * counts at `level`, on the scale the rows were made with (kaplanMeier's
 * confType; 'log' for rows from elsewhere, or as given in opts).
 * Each value is null where it is not reached.
 */
export function medianSurvival(
  steps: readonly KaplanMeierStep[],
  level = 0.95,
  opts: { confType?: ConfType } = {},
): MedianSurvival {
  checkSteps(steps);
  const confType = checkConfType(opts.confType ?? confTypeOf.get(steps) ?? 'log');
  const z = zForLevel(level);
  const m = steps.length;
  const surv = new Float64Array(m);
  const lo = new Float64Array(m);
  const hi = new Float64Array(m);
  const pair = new Float64Array(2);
  let g = 0;
  for (let k = 0; k < m; k++) {
    const r = steps[k];
    if (r.nEvent > 0) g += greenwoodTerm(r.nRisk, r.nEvent);
    surv[k] = r.survival;
    rBounds(r.survival, Math.sqrt(g), z, confType, pair);
    lo[k] = pair[0];
    hi[k] = pair[1];
  }
  return {
    median: firstAtOrBelowHalf(surv, steps),
    lower: firstAtOrBelowHalf(lo, steps),
    upper: firstAtOrBelowHalf(hi, steps),
  };
}

/**
 * Restricted mean survival time up to tau: the area under the step curve from
 * time 0 to tau (R: print(fit, rmean = tau)). Past the last row the curve is
 * carried at its last value.
 */
export function restrictedMean(steps: readonly KaplanMeierStep[], tau: number): number {
  checkSteps(steps);
  if (steps.length === 0) throw new RangeError('restrictedMean needs at least one observation');
  if (typeof tau !== 'number' || !Number.isFinite(tau) || tau < 0) {
    throw new RangeError(`tau must be a finite number >= 0, got ${String(tau)}`);
  }
  if (steps[0].time < 0) throw new RangeError('restrictedMean integrates from time 0; times must be >= 0');
  let area = 0;
  let prevT = 0;
  let prevS = 1;
  for (const r of steps) {
    if (r.time > tau) break;
    area += (r.time - prevT) * prevS;
    prevT = r.time;
    prevS = r.survival;
  }
  return area + (tau - prevT) * prevS;
}

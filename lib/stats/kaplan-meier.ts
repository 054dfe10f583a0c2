import { zForLevel } from './distributions';
import { checkObservation } from './internal';

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
function rBounds(s: number, se: number, z: number, confType: ConfType): [number, number] {
  if (confType === 'plain') {
    const se2 = se * s * z;
    if (Number.isNaN(se2)) return [NaN, NaN];
    return [Math.max(s - se2, 0), Math.min(s + se2, 1)];
  }
  if (confType === 'log') {
    if (s === 0) return [NaN, NaN];
    const se2 = z * se;
    return [Math.exp(Math.log(s) - se2), Math.min(Math.exp(Math.log(s) + se2), 1)];
  }
  if (s === 0 || s === 1) return [NaN, NaN];
  const se2 = (z * se) / Math.log(s);
  const ll = Math.log(-Math.log(s));
  return [Math.exp(-Math.exp(ll - se2)), Math.exp(-Math.exp(ll + se2))];
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
 * O(n log n): the event times and the censoring times are sorted once each
 * (native Float64Array sorts) and merged.
 */
export function kaplanMeier(obs: readonly SurvivalObservation[], opts: KaplanMeierOptions = {}): KaplanMeierStep[] {
  const level = opts.level ?? 0.95;
  const confType = checkConfType(opts.confType ?? 'log');
  const z = zForLevel(level);
  if (!Array.isArray(obs)) throw new TypeError('kaplanMeier expects an array of { time, event }');
  const n = obs.length;
  let nev = 0;
  for (let i = 0; i < n; i++) {
    const o = obs[i];
    if (o === null || typeof o !== 'object') throw new TypeError(`observation ${i}: expected { time, event }`);
    checkObservation(o.time, o.event, `observation ${i}`);
    if (o.event) nev++;
  }
  const ev = new Float64Array(nev);
  const ce = new Float64Array(n - nev);
  for (let i = 0, a = 0, b = 0; i < n; i++) {
    const o = obs[i];
    if (o.event) ev[a++] = o.time;
    else ce[b++] = o.time;
  }
  ev.sort();
  ce.sort();
  const steps: KaplanMeierStep[] = [];
  let i = 0;
  let j = 0;
  let atRisk = n;
  let s = 1;
  let greenwood = 0;
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
    if (d > 0) {
      s *= (atRisk - d) / atRisk;
      greenwood += atRisk === d ? Infinity : d / (atRisk * (atRisk - d));
    }
    let [lower, upper] = rBounds(s, Math.sqrt(greenwood), z, confType);
    if (Number.isNaN(lower)) lower = s;
    if (Number.isNaN(upper)) upper = s;
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
  let g = 0;
  for (let k = 0; k < m; k++) {
    const r = steps[k];
    if (r.nEvent > 0) g += r.nRisk === r.nEvent ? Infinity : r.nEvent / (r.nRisk * (r.nRisk - r.nEvent));
    surv[k] = r.survival;
    const [a, b] = rBounds(r.survival, Math.sqrt(g), z, confType);
    lo[k] = a;
    hi[k] = b;
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

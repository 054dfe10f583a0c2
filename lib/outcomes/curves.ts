/**
 * Survival curves of the outcomes area (issue 12, item 3), from the rows of cases.ts:
 * - healing (failure: disease, retreatment, surgery, extraction) or tooth loss (extraction);
 * - Turnbull by default — failures are found at recall visits, so the time is only known to lie
 *   between the last clear review and the one that found it — or Kaplan–Meier with the failure
 *   at the review that found it, with its log-scale 95% band;
 * - per level of a factor, numbers at risk at 0/6/12/24/36/48 months, censoring marks,
 *   and a log-rank test across levels (on the visit dates: lib/stats has no interval-censored test),
 *   stratified by a second factor when one is chosen (each stratum its own risk sets, as R survdiff);
 * - per level, the median and the restricted mean to 48 months with 95% intervals (Kaplan–Meier);
 * - cumulative incidence of the first retreatment, apical surgery and extraction as competing
 *   events (Aalen–Johansen), censored at the last review.
 */
import { daysBetween } from '@/lib/registry/calendar-date';
import type { Interval } from '@/lib/scoring';
import { cumulativeIncidence, logRank, medianSurvival, restrictedMeanInterval } from '@/lib/stats';
import { healingObservation, milestoneDays, toothLossFrom, toothLossStarts, type OutcomeCase } from './cases';
import { compareLevels, FACTORS, kmOf, TURNBULL_MAX, turnbullOrNull, type FactorKey } from './compute';
import { kmObservation } from './facts';

export const AT_RISK_MONTHS = [0, 6, 12, 24, 36, 48] as const;
export type Endpoint = 'healing' | 'tooth';
export type CurveMethod = 'turnbull' | 'km';

export interface CurvePoint {
  time: number;
  survival: number;
  lower?: number;
  upper?: number;
}

export interface Curve {
  level: string;
  n: number;
  events: number;
  points: CurvePoint[];
  /** days at which cases were right-censored (distinct) */
  censored: number[];
  /** still under observation at each of AT_RISK_MONTHS: (right ?? left) ≥ t */
  atRisk: number[];
  /**
   * Median survival in days with its 95% interval (lib/stats medianSurvival, as R print(survfit)), from
   * the Kaplan–Meier curve on the visit dates whichever curve is drawn; each null when not reached.
   */
  median: { median: number | null; lower: number | null; upper: number | null };
  /**
   * Restricted mean survival time to RMST_MONTHS (days free of the event in the first 48 months) with
   * R's se(rmean) and a 95% Wald interval (lib/stats restrictedMeanInterval), from the same
   * Kaplan–Meier curve; null when no case was followed that long.
   */
  rmst: { tau: number; mean: number; se: number; lower: number; upper: number } | null;
}

export interface Curves {
  endpoint: Endpoint;
  /** the method asked for, and the one used (Turnbull falls back to KM above TURNBULL_MAX) */
  asked: CurveMethod;
  method: CurveMethod;
  /** Turnbull was asked and within TURNBULL_MAX but did not converge for some level: Kaplan–Meier is shown */
  turnbullFailed?: boolean;
  factor: FactorKey | null;
  /** the factor the log-rank test is stratified by (never the split factor itself) */
  stratum: FactorKey | null;
  curves: Curve[];
  /** across the levels, on the visit dates; `method` names the test as the screen says it */
  logRank: { chiSquare: number; df: number; pValue: number; stratum: FactorKey | null; method: string } | null;
  /** why there is no log-rank test although there are levels and events (its variance is singular) */
  logRankNote: string | null;
  competing: { cause: string; points: { time: number; incidence: number; lower: number; upper: number }[] }[];
}

/** A level's curve; null when Turnbull was asked and did not converge (the caller falls back to Kaplan–Meier). */
function curveOf(level: string, intervals: Interval[], method: CurveMethod): Curve | null {
  let points: CurvePoint[] = [{ time: 0, survival: 1, lower: 1, upper: 1 }];
  let median: Curve['median'] = { median: null, lower: null, upper: null };
  let rmst: Curve['rmst'] = null;
  if (intervals.length > 0) {
    const km = kmOf(intervals);
    if (method === 'km') points.push(...km.map((s) => ({ time: s.time, survival: s.survival, lower: s.lower, upper: s.upper })));
    else {
      const tb = turnbullOrNull(intervals);
      if (tb === null) return null;
      points = [{ time: 0, survival: 1 }, ...tb.map((s) => ({ time: s.upper, survival: s.survival }))];
    }
    median = medianSurvival(km);
    const tau = milestoneDays(RMST_MONTHS);
    if (km[km.length - 1]!.time >= tau) rmst = restrictedMeanInterval(km, tau);
  }
  return {
    level,
    n: intervals.length,
    events: intervals.filter((i) => i.right !== null).length,
    points,
    censored: [...new Set(intervals.filter((i) => i.right === null).map((i) => i.left))].sort((a, b) => a - b),
    atRisk: AT_RISK_MONTHS.map((m) => intervals.filter((i) => (i.right ?? i.left) >= milestoneDays(m)).length),
    median,
    rmst,
  };
}

const CAUSE_OF: Record<string, string | undefined> = { retreated: 'retreatment', surgery: 'apical surgery', extracted: 'extraction' };

/** The first retreatment, surgery or extraction of each case (its own date when known), else censored at the last review. */
export function competingRows(selection: readonly OutcomeCase[]): { time: number; cause: string | null }[] {
  return selection.map((c) => {
    const first = c.reviews.find((r) => r.toothStatus !== 'present');
    if (first) return { time: daysBetween(c.completionDate, first.eventDate ?? first.reviewDate), cause: CAUSE_OF[first.toothStatus]! };
    const last = c.reviews[c.reviews.length - 1];
    return { time: last ? daysBetween(c.completionDate, last.reviewDate) : 0, cause: null };
  });
}

/** Restricted mean survival time horizon: 48 months (the registry's longest milestone). */
export const RMST_MONTHS = 48;

export function curves(
  selection: readonly OutcomeCase[],
  all: readonly OutcomeCase[],
  opts: { endpoint: Endpoint; method: CurveMethod; factor: FactorKey | null; stratum?: FactorKey | null; minObs: number; levelName?: (level: string) => string },
): Curves {
  const groups = new Map<string, OutcomeCase[]>();
  const levelOf = opts.factor ? FACTORS[opts.factor].level : () => 'All cases';
  for (const c of selection) {
    const k = levelOf(c);
    const g = groups.get(k);
    if (g) g.push(c);
    else groups.set(k, [c]);
  }
  const order = compareLevels(opts.factor);
  const named = (level: string) => (opts.levelName ? opts.levelName(level) : level);
  const sorted = [...groups.entries()].sort(([a], [b]) => order(named(a), named(b)));
  // each observation with the case it starts from (a tooth from its earliest case in the level, as
  // toothLossObservations on the level's cases), for the stratum
  const observe = (cases: OutcomeCase[]) =>
    opts.endpoint === 'tooth'
      ? toothLossStarts(cases).map((c) => ({ c, i: toothLossFrom(c, all, opts.minObs) }))
      : cases.map((c) => ({ c, i: healingObservation(c, opts.minObs) }));
  const byLevel = sorted.map(([level, cases]) => {
    const obs = observe(cases);
    return { level, obs, intervals: obs.map((o) => o.i) };
  });
  const total = byLevel.reduce((s, g) => s + g.intervals.length, 0);
  let method: CurveMethod = opts.method === 'turnbull' && total > TURNBULL_MAX ? 'km' : opts.method;
  let curveList = byLevel.map((g) => curveOf(named(g.level), g.intervals, method));
  const turnbullFailed = curveList.some((c) => c === null);
  if (turnbullFailed) {
    method = 'km';
    curveList = byLevel.map((g) => curveOf(named(g.level), g.intervals, 'km'));
  }
  const withCases = byLevel.filter((g) => g.intervals.length > 0);
  const stratum = opts.stratum && opts.stratum !== opts.factor ? opts.stratum : null;
  let lr: Curves['logRank'] = null;
  let logRankNote: string | null = null;
  let r: ReturnType<typeof logRank> | null = null;
  if (withCases.length >= 2 && withCases.some((g) => g.intervals.some((i) => i.right !== null))) {
    const stratumOf = stratum ? FACTORS[stratum].level : null;
    try {
      r = logRank(Object.fromEntries(withCases.map((g) => [g.level, g.obs.map((o) => (stratumOf ? { ...kmObservation(o.i), stratum: stratumOf(o.c) } : kmObservation(o.i)))])));
    } catch (e) {
      // a singular variance: no event time (in any stratum) has two levels at risk, so the test has no information
      if (!(e instanceof RangeError)) throw e;
      logRankNote = stratum
        ? `No stratified log-rank test: within no ${FACTORS[stratum].label.toLowerCase()} group do two levels share an event time with cases at risk.`
        : 'No log-rank test: no event time has two levels with cases at risk.';
    }
  }
  if (r) {
    lr = {
      chiSquare: r.chiSquare,
      df: r.df,
      pValue: r.pValue,
      stratum,
      method: stratum
        ? `stratified log-rank test (Mantel–Haenszel, as R survdiff with strata(); by ${FACTORS[stratum].label.toLowerCase()})`
        : 'log-rank test (Mantel–Haenszel, as R survdiff)',
    };
  }
  const rows = competingRows(selection);
  const ci = rows.length > 0 ? cumulativeIncidence(rows) : {};
  return {
    endpoint: opts.endpoint,
    asked: opts.method,
    method,
    turnbullFailed,
    factor: opts.factor,
    stratum,
    curves: curveList as Curve[],
    logRank: lr,
    logRankNote,
    competing: Object.entries(ci).map(([cause, steps]) => ({ cause, points: steps.map((s) => ({ time: s.time, incidence: s.incidence, lower: s.lower, upper: s.upper })) })),
  };
}

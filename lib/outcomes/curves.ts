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
import type { Interval } from '@/lib/scoring';
import { cumulativeIncidence, kaplanMeier, logRank, medianSurvival, restrictedMeanInterval } from '@/lib/stats';
import { milestoneDays, type OutcomeCase } from './cases';
import { compareLevels, FACTORS, TURNBULL_MAX, turnbullOrNull, type FactorKey } from './compute';
import { selectionIn, toothLossStartsIn, type KmObservation, type SelectionFacts } from './facts';

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

/** A level's curve from its intervals and their Kaplan–Meier observations; null when Turnbull was asked and did not converge (the caller falls back to Kaplan–Meier). */
function curveOf(level: string, intervals: readonly Interval[], observations: readonly KmObservation[], method: CurveMethod): Curve | null {
  let points: CurvePoint[] = [{ time: 0, survival: 1, lower: 1, upper: 1 }];
  let median: Curve['median'] = { median: null, lower: null, upper: null };
  let rmst: Curve['rmst'] = null;
  if (intervals.length > 0) {
    const km = kaplanMeier(observations);
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
  // events, censoring days and numbers at risk ((right ?? left) ≥ t) in one pass
  let events = 0;
  const censored = new Set<number>();
  const atRisk = AT_RISK_MONTHS.map(() => 0);
  for (const i of intervals) {
    if (i.right !== null) events++;
    else censored.add(i.left);
    const t = i.right ?? i.left;
    for (let m = 0; m < AT_RISK_DAYS.length; m++) if (t >= AT_RISK_DAYS[m]!) atRisk[m]! += 1;
  }
  return { level, n: intervals.length, events, points, censored: [...censored].sort((a, b) => a - b), atRisk, median, rmst };
}

const AT_RISK_DAYS = AT_RISK_MONTHS.map(milestoneDays);

/** Restricted mean survival time horizon: 48 months (the registry's longest milestone). */
export const RMST_MONTHS = 48;

export function curves(
  selection: readonly OutcomeCase[],
  all: readonly OutcomeCase[],
  opts: { endpoint: Endpoint; method: CurveMethod; factor: FactorKey | null; stratum?: FactorKey | null; minObs: number; levelName?: (level: string) => string },
): Curves {
  // the selection's per-case facts (facts.ts: the rules of cases.ts, kept per rows array), read by position
  const sel = selectionIn(selection, all, opts.minObs);
  const { facts, at } = sel;
  const groups = new Map<string, number[]>();
  const levelOf = opts.factor ? FACTORS[opts.factor].level : () => 'All cases';
  for (let k = 0; k < selection.length; k++) {
    const key = levelOf(selection[k]!);
    const g = groups.get(key);
    if (g) g.push(at[k]!);
    else groups.set(key, [at[k]!]);
  }
  const order = compareLevels(opts.factor);
  const named = (level: string) => (opts.levelName ? opts.levelName(level) : level);
  const sorted = [...groups.entries()].sort(([a], [b]) => order(named(a), named(b)));
  // each level's observations by the position of the case they start from: a tooth from its earliest
  // case in the level (as toothLossObservations on the level's cases), else every case's healing
  const tooth = opts.endpoint === 'tooth';
  const starts = (positions: number[]): Int32Array => {
    const level: SelectionFacts = { facts, at: Int32Array.from(positions) };
    return toothLossStartsIn(level).map((k) => level.at[k]!);
  };
  const [intervalOf, observationOf] = tooth ? [facts.toothLoss, facts.toothLossKm] : [facts.healing, facts.healingKm];
  const byLevel = sorted.map(([level, positions]) => {
    const from = tooth ? starts(positions) : positions;
    return { level, from, intervals: Array.from(from, (p) => intervalOf[p]!), observations: Array.from(from, (p) => observationOf[p]!) };
  });
  const total = byLevel.reduce((s, g) => s + g.intervals.length, 0);
  let method: CurveMethod = opts.method === 'turnbull' && total > TURNBULL_MAX ? 'km' : opts.method;
  let curveList = byLevel.map((g) => curveOf(named(g.level), g.intervals, g.observations, method));
  const turnbullFailed = curveList.some((c) => c === null);
  if (turnbullFailed) {
    method = 'km';
    curveList = byLevel.map((g) => curveOf(named(g.level), g.intervals, g.observations, 'km'));
  }
  const withCases = byLevel.filter((g) => g.intervals.length > 0);
  const stratum = opts.stratum && opts.stratum !== opts.factor ? opts.stratum : null;
  let lr: Curves['logRank'] = null;
  let logRankNote: string | null = null;
  let r: ReturnType<typeof logRank> | null = null;
  if (withCases.length >= 2 && withCases.some((g) => g.intervals.some((i) => i.right !== null))) {
    const stratumOf = stratum ? FACTORS[stratum].level : null;
    try {
      r = logRank(
        Object.fromEntries(
          withCases.map((g) => [g.level, stratumOf ? Array.from(g.from, (p, j) => ({ time: g.observations[j]!.time, event: g.observations[j]!.event, stratum: stratumOf(facts.cases[p]!) })) : g.observations]),
        ),
      );
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
  const rows = Array.from(at, (p) => facts.competing[p]!);
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

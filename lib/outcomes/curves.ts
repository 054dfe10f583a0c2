/**
 * Survival curves of the outcomes area (issue 12, item 3), from the rows of cases.ts:
 * - healing (failure: disease, retreatment, surgery, extraction) or tooth loss (extraction);
 * - Turnbull by default — failures are found at recall visits, so the time is only known to lie
 *   between the last clear review and the one that found it — or Kaplan–Meier with the failure
 *   at the review that found it, with its log-scale 95% band;
 * - per level of a factor, numbers at risk at 0/6/12/24/36/48 months, censoring marks,
 *   and a log-rank test across levels (on the visit dates: lib/stats has no interval-censored test);
 * - cumulative incidence of the first retreatment, apical surgery and extraction as competing
 *   events (Aalen–Johansen), censored at the last review.
 */
import { daysBetween } from '@/lib/registry/calendar-date';
import type { Interval } from '@/lib/scoring';
import { cumulativeIncidence, logRank } from '@/lib/stats';
import { healingObservations, milestoneDays, toothLossObservations, type OutcomeCase } from './cases';
import { compareLevels, FACTORS, kmOf, TURNBULL_MAX, turnbullOrNull, type FactorKey } from './compute';

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
}

export interface Curves {
  endpoint: Endpoint;
  /** the method asked for, and the one used (Turnbull falls back to KM above TURNBULL_MAX) */
  asked: CurveMethod;
  method: CurveMethod;
  /** Turnbull was asked and within TURNBULL_MAX but did not converge for some level: Kaplan–Meier is shown */
  turnbullFailed?: boolean;
  factor: FactorKey | null;
  curves: Curve[];
  logRank: { chiSquare: number; df: number; pValue: number } | null;
  competing: { cause: string; points: { time: number; incidence: number; lower: number; upper: number }[] }[];
}

const obsOf = (i: Interval) => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true });

/** A level's curve; null when Turnbull was asked and did not converge (the caller falls back to Kaplan–Meier). */
function curveOf(level: string, intervals: Interval[], method: CurveMethod): Curve | null {
  let points: CurvePoint[] = [{ time: 0, survival: 1, lower: 1, upper: 1 }];
  if (intervals.length > 0) {
    if (method === 'km') points.push(...kmOf(intervals).map((s) => ({ time: s.time, survival: s.survival, lower: s.lower, upper: s.upper })));
    else {
      const tb = turnbullOrNull(intervals);
      if (tb === null) return null;
      points = [{ time: 0, survival: 1 }, ...tb.map((s) => ({ time: s.upper, survival: s.survival }))];
    }
  }
  return {
    level,
    n: intervals.length,
    events: intervals.filter((i) => i.right !== null).length,
    points,
    censored: [...new Set(intervals.filter((i) => i.right === null).map((i) => i.left))].sort((a, b) => a - b),
    atRisk: AT_RISK_MONTHS.map((m) => intervals.filter((i) => (i.right ?? i.left) >= milestoneDays(m)).length),
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

export function curves(
  selection: readonly OutcomeCase[],
  all: readonly OutcomeCase[],
  opts: { endpoint: Endpoint; method: CurveMethod; factor: FactorKey | null; minObs: number; levelName?: (level: string) => string },
): Curves {
  const groups = new Map<string, OutcomeCase[]>();
  const levelOf = opts.factor ? FACTORS[opts.factor].level : () => 'All cases';
  for (const c of selection) {
    const k = levelOf(c);
    groups.set(k, [...(groups.get(k) ?? []), c]);
  }
  const order = compareLevels(opts.factor);
  const named = (level: string) => (opts.levelName ? opts.levelName(level) : level);
  const sorted = [...groups.entries()].sort(([a], [b]) => order(named(a), named(b)));
  const intervalsOf = (cases: OutcomeCase[]) => (opts.endpoint === 'tooth' ? toothLossObservations(cases, all, opts.minObs) : healingObservations(cases, opts.minObs));
  const byLevel = sorted.map(([level, cases]) => ({ level, intervals: intervalsOf(cases) }));
  const total = byLevel.reduce((s, g) => s + g.intervals.length, 0);
  let method: CurveMethod = opts.method === 'turnbull' && total > TURNBULL_MAX ? 'km' : opts.method;
  let curveList = byLevel.map((g) => curveOf(named(g.level), g.intervals, method));
  const turnbullFailed = curveList.some((c) => c === null);
  if (turnbullFailed) {
    method = 'km';
    curveList = byLevel.map((g) => curveOf(named(g.level), g.intervals, 'km'));
  }
  const withCases = byLevel.filter((g) => g.intervals.length > 0);
  let lr: Curves['logRank'] = null;
  if (withCases.length >= 2 && withCases.some((g) => g.intervals.some((i) => i.right !== null))) {
    const r = logRank(Object.fromEntries(withCases.map((g) => [g.level, g.intervals.map(obsOf)])));
    lr = { chiSquare: r.chiSquare, df: r.df, pValue: r.pValue };
  }
  const rows = competingRows(selection);
  const ci = rows.length > 0 ? cumulativeIncidence(rows) : {};
  return {
    endpoint: opts.endpoint,
    asked: opts.method,
    method,
    turnbullFailed,
    factor: opts.factor,
    curves: curveList as Curve[],
    logRank: lr,
    competing: Object.entries(ci).map(([cause, steps]) => ({ cause, points: steps.map((s) => ({ time: s.time, incidence: s.incidence, lower: s.lower, upper: s.upper })) })),
  };
}

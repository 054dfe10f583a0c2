/**
 * The figures of the outcomes area, from the rows of lib/outcomes/cases.ts. Pure: the service
 * reads, this computes, and tests call it (and lib/stats / lib/scoring directly) on rows they define.
 */
import { CASE_KIND_LABELS, type CaseKind } from '@/lib/registry/case-kinds';
import { type CalendarDate } from '@/lib/registry/calendar-date';
import type { Interval } from '@/lib/scoring';
import { chiSquareTest, fisherExact2x2, kaplanMeier, turnbull, wilsonInterval } from '@/lib/stats';
import {
  isDue,
  isLenientSuccess,
  isStrictSuccess,
  lostAt,
  milestoneDays,
  MILESTONES,
  outcomeAfterAYear,
  outcomeAt,
  outcomeAtMilestone,
  SURVIVAL_YEARS,
  type FollowUpPoint,
  toothLossObservations,
  type OutcomeCase,
} from './cases';

/** Fewer cases than this in a figure: shown greyed with "few cases". */
export const FEW_CASES = 20;
/** Completeness below this: the warning band. */
export const COMPLETENESS_WARNING = 0.6;
/**
 * Above this many teeth the Turnbull estimate is not computed (it takes seconds at several
 * thousand intervals with day-level dates and ~50 s at 20,000; lib/stats README) and the screens
 * show the Kaplan–Meier estimate alone, saying so.
 */
export const TURNBULL_MAX = 5000;

export interface OutcomeFilter {
  /** Completion dates from / to (inclusive), 'YYYY-MM-DD'. */
  from?: CalendarDate;
  to?: CalendarDate;
  clinician?: string;
  kind?: CaseKind;
}

/** The cases a filter keeps (completion date within the period, the clinician who treated, the kind). */
export function applyFilter(rows: readonly OutcomeCase[], f: OutcomeFilter): OutcomeCase[] {
  return rows.filter(
    (c) =>
      (!f.from || c.completionDate >= f.from) &&
      (!f.to || c.completionDate <= f.to) &&
      (!f.clinician || c.operatorId === f.clinician) &&
      (!f.kind || c.kind === f.kind),
  );
}

export interface Rate {
  x: number;
  n: number;
  estimate: number | null;
  lower: number | null;
  upper: number | null;
  few: boolean;
}

export function rate(x: number, n: number): Rate {
  if (n === 0) return { x, n, estimate: null, lower: null, upper: null, few: true };
  const w = wilsonInterval(x, n);
  return { x, n, estimate: w.estimate, lower: w.lower, upper: w.upper, few: n < FEW_CASES };
}

export interface SuccessFigure {
  /** 'latest' = the latest review a year or more after completion */
  at: number | 'latest';
  strict: Rate;
  lenient: Rate;
  /** reviews scored uncertain at that time (neither success nor failure; not in n) */
  uncertain: number;
  /** lost to follow-up then (lib/outcomes/cases.ts `lostAt`: due, outcome not known) */
  missing: number;
  /** the lost cases counted as successes / as failures (item 6 of issue 12) */
  strictBounds: { best: number | null; worst: number | null };
  lenientBounds: { best: number | null; worst: number | null };
}

function successFigure(cases: readonly OutcomeCase[], at: FollowUpPoint, today: CalendarDate, minObs: number): SuccessFigure {
  let n = 0;
  let strict = 0;
  let lenient = 0;
  let uncertain = 0;
  let missing = 0;
  cases.forEach((c) => {
    const o = outcomeAt(c, at, minObs);
    if (o === null) {
      if (lostAt(c, at, today, minObs)) missing += 1;
      return;
    }
    if (o === 'uncertain') {
      uncertain += 1;
      return;
    }
    n += 1;
    if (isStrictSuccess(o)) strict += 1;
    if (isLenientSuccess(o)) lenient += 1;
  });
  const bounds = (x: number) => (n + missing === 0 ? { best: null, worst: null } : { best: (x + missing) / (n + missing), worst: x / (n + missing) });
  return { at, strict: rate(strict, n), lenient: rate(lenient, n), uncertain, missing, strictBounds: bounds(strict), lenientBounds: bounds(lenient) };
}

export interface CompletenessFigure {
  months: number;
  /** seen at the milestone ÷ due for it */
  rate: Rate;
}

export interface SurvivalFigure {
  years: number;
  days: number;
  /** Kaplan–Meier (the event at the review that found it), log-scale 95% interval as R survfit */
  km: { survival: number; lower: number; upper: number; nRisk: number };
  /** Turnbull S(t) for the interval-censored times; null above TURNBULL_MAX teeth */
  turnbull: number | null;
}

export interface Overview {
  today: CalendarDate;
  cases: number;
  reviewed: number;
  /** lost to follow-up at the primary endpoint (`lostAt(c, 'latest')`) ÷ cases due for the 12-month review */
  lost: Rate;
  /** of the lost cases, those the desk is still inviting (a recall visit open or missed, not closed) */
  lostStillInvited: number;
  completeness: CompletenessFigure[];
  /** the lowest completeness is below COMPLETENESS_WARNING */
  warning: boolean;
  success: SuccessFigure[];
  teeth: number;
  toothLossEvents: number;
  turnbullComputed: boolean;
  survival: SurvivalFigure[];
}

/** Kaplan–Meier on intervals, an interval's event at its right end (the review that found it). */
export function kmOf(intervals: readonly Interval[]) {
  return kaplanMeier(intervals.map((i) => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true })));
}

/** S(t) from a step function whose rows carry `time`/`upper` and `survival` (1 before the first step). */
export function stepAt<T extends { survival: number }>(steps: readonly T[], at: (s: T) => number, t: number): T | null {
  let row: T | null = null;
  for (const s of steps) if (at(s) <= t) row = s;
  return row;
}

export function overview(selection: readonly OutcomeCase[], all: readonly OutcomeCase[], today: CalendarDate, minObs: number): Overview {
  const completeness = [12, 24].map((months) => {
    const due = selection.filter((c) => isDue(c, months, today));
    const seen = due.filter((c) => outcomeAtMilestone(c, months, minObs) !== null);
    return { months, rate: rate(seen.length, due.length) };
  });
  const lost = selection.filter((c) => lostAt(c, 'latest', today, minObs));
  const intervals = toothLossObservations(selection, all, minObs);
  const km = kmOf(intervals);
  const turnbullComputed = intervals.length > 0 && intervals.length <= TURNBULL_MAX;
  const tb = turnbullComputed ? turnbull(intervals) : [];
  const survival = SURVIVAL_YEARS.map((years) => {
    const days = milestoneDays(years * 12);
    const k = stepAt(km, (s) => s.time, days);
    const atRisk = intervals.filter((i) => (i.right ?? i.left) >= days).length;
    const t = stepAt(tb, (s) => s.upper, days);
    return {
      years,
      days,
      km: { survival: k?.survival ?? 1, lower: k?.lower ?? 1, upper: k?.upper ?? 1, nRisk: atRisk },
      turnbull: turnbullComputed ? (t?.survival ?? 1) : null,
    };
  });
  return {
    today,
    cases: selection.length,
    reviewed: selection.filter((c) => c.reviews.length > 0).length,
    lost: rate(lost.length, selection.filter((c) => isDue(c, 12, today)).length),
    lostStillInvited: lost.filter((c) => c.openVisit).length,
    completeness,
    warning: completeness.some((c) => c.rate.n > 0 && (c.rate.estimate ?? 0) < COMPLETENESS_WARNING),
    success: [...MILESTONES, 'latest' as const].map((at) => successFigure(selection, at, today, minObs)),
    teeth: intervals.length,
    toothLossEvents: intervals.filter((i) => i.right !== null).length,
    turnbullComputed,
    survival,
  };
}

// ---------------------------------------------------------------------------------------------
// By factor

export const FACTORS = {
  kind: { label: 'Treatment kind', level: (c: OutcomeCase) => CASE_KIND_LABELS[c.kind as CaseKind] ?? c.kind },
  lesion: {
    label: 'Lesion size before treatment',
    level: (c: OutcomeCase) => (c.lesionDiameterMm <= 0 ? 'No lesion' : c.lesionDiameterMm < 5 ? 'Under 5 mm' : c.lesionDiameterMm < 10 ? '5 to under 10 mm' : '10 mm or more'),
  },
  pai: { label: 'PAI before treatment', level: (c: OutcomeCase) => `PAI ${c.baselinePai}` },
  fill: {
    label: 'Fill length',
    level: (c: OutcomeCase) =>
      c.fillLengthClass === null ? 'Not measured' : c.fillLengthClass === 'within' ? 'Within 0–2 mm' : c.fillLengthClass === 'short' ? 'Short (over 2 mm)' : 'Beyond the apex',
  },
  group: { label: 'Tooth group', level: (c: OutcomeCase) => c.toothGroup.charAt(0).toUpperCase() + c.toothGroup.slice(1) },
  arch: { label: 'Arch', level: (c: OutcomeCase) => (c.toothArch === 'upper' ? 'Upper' : 'Lower') },
  clinician: { label: 'Clinician', level: (c: OutcomeCase) => c.operatorId },
  year: { label: 'Year of treatment', level: (c: OutcomeCase) => c.completionDate.slice(0, 4) },
} as const satisfies Record<string, { label: string; level: (c: OutcomeCase) => string }>;

export type FactorKey = keyof typeof FACTORS;

/** Levels with a natural order (size bands, fill length) come in that order; others alphabetically. */
const ORDERED_LEVELS = ['No lesion', 'Under 5 mm', '5 to under 10 mm', '10 mm or more', 'Within 0–2 mm', 'Short (over 2 mm)', 'Beyond the apex', 'Not measured'];
export function levelOrder(level: string): number {
  const i = ORDERED_LEVELS.indexOf(level);
  return i === -1 ? ORDERED_LEVELS.length : i;
}
export const FACTOR_KEYS = Object.keys(FACTORS) as FactorKey[];

export interface FactorLevel {
  level: string;
  cases: number;
  strict: Rate;
  lenient: Rate;
  uncertain: number;
}

export interface FactorTable {
  factor: FactorKey;
  levels: FactorLevel[];
  /** test of strict success across levels with judged cases: Fisher's exact (2 levels) or Pearson's χ² */
  test: { method: 'fisher' | 'chi-square'; pValue: number; chiSquare?: number; df?: number; sparse: boolean } | null;
}

/** Strict and lenient success at the latest review a year or more after completion, per level of a factor. */
export function byFactor(selection: readonly OutcomeCase[], factor: FactorKey, minObs: number): FactorTable {
  const level = FACTORS[factor].level;
  const groups = new Map<string, { cases: number; n: number; strict: number; lenient: number; uncertain: number }>();
  for (const c of selection) {
    const key = level(c);
    const g = groups.get(key) ?? { cases: 0, n: 0, strict: 0, lenient: 0, uncertain: 0 };
    g.cases += 1;
    const o = outcomeAfterAYear(c, minObs);
    if (o === 'uncertain') g.uncertain += 1;
    else if (o !== null) {
      g.n += 1;
      if (isStrictSuccess(o)) g.strict += 1;
      if (isLenientSuccess(o)) g.lenient += 1;
    }
    groups.set(key, g);
  }
  const levels = [...groups.entries()]
    .sort(([a], [b]) => levelOrder(a) - levelOrder(b) || a.localeCompare(b, 'en', { numeric: true }))
    .map(([lvl, g]) => ({ level: lvl, cases: g.cases, strict: rate(g.strict, g.n), lenient: rate(g.lenient, g.n), uncertain: g.uncertain }));
  const judged = levels.filter((l) => l.strict.n > 0);
  const table = judged.map((l) => [l.strict.x, l.strict.n - l.strict.x] as [number, number]);
  const colTotals = [0, 1].map((j) => table.reduce((s, r) => s + r[j]!, 0));
  let test: FactorTable['test'] = null;
  if (table.length >= 2 && colTotals.every((t) => t > 0)) {
    if (table.length === 2) test = { method: 'fisher', pValue: fisherExact2x2([table[0]!, table[1]!]).pValue, sparse: false };
    else {
      const total = colTotals[0]! + colTotals[1]!;
      const sparse = table.some((r) => colTotals.some((ct) => ((r[0] + r[1]) * ct) / total < 5));
      const r = chiSquareTest(table);
      test = { method: 'chi-square', pValue: r.pValue, chiSquare: r.chiSquare, df: r.df, sparse };
    }
  }
  return { factor, levels, test };
}

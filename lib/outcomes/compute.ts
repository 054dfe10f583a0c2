/**
 * The figures of the outcomes area, from the rows of lib/outcomes/cases.ts. Pure: the service
 * reads, this computes, and tests call it (and lib/stats / lib/scoring directly) on rows they define.
 */
import { CASE_KIND_LABELS, CASE_KINDS, type CaseKind } from '@/lib/registry/case-kinds';
import {
  COMPLETION_RESTORATION_LABELS,
  COMPLICATION_LABELS,
  DEFINITIVE_RESTORATION_LABELS,
  fieldApplies,
  FILL_DENSITY_LABELS,
  FILLING_TECHNIQUE_LABELS,
  SEALER_CLASS_LABELS,
  type CaseField,
} from '@/lib/schemas/case';
import { type CalendarDate } from '@/lib/registry/calendar-date';
import type { Interval } from '@/lib/scoring';
import { chiSquareTest, fisherExact2x2, kaplanMeier, turnbull, wilsonInterval } from '@/lib/stats';
import { isLenientSuccess, isStrictSuccess, milestoneDays, MILESTONES, outcomeAfterAYear, outcomeAt, SURVIVAL_YEARS, type FollowUpPoint, type OutcomeCase, windowDays } from './cases';
import {
  dayOf,
  type KmObservation,
  kmObservation,
  LENIENT_SUCCESS,
  OUTCOME_NONE,
  OUTCOME_UNCERTAIN,
  outcomeCode,
  rememberSelection,
  type RowFacts,
  selectionIn,
  type SelectionFacts,
  STRICT_SUCCESS,
  toothLossStartsIn,
} from './facts';

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
  /** Levels of factors (URL `f.<factor>=<code>,<code>`): a case is kept when, for every factor named, its level is one of those listed. */
  levels?: LevelFilters;
}

export type LevelFilters = Partial<Record<FactorKey, readonly string[]>>;

/** The cases a filter keeps (completion date within the period, the clinician who treated, the kind, the levels of factors). */
export function applyFilter(rows: readonly OutcomeCase[], f: OutcomeFilter): OutcomeCase[] {
  const levels = Object.entries(f.levels ?? {})
    .filter(([, codes]) => codes && codes.length > 0)
    .map(([k, codes]) => ({ code: FACTORS[k as FactorKey].code, codes: new Set(codes) }));
  const out: OutcomeCase[] = [];
  const at = new Int32Array(rows.length);
  for (let k = 0; k < rows.length; k++) {
    const c = rows[k]!;
    if (
      (!f.from || c.completionDate >= f.from) &&
      (!f.to || c.completionDate <= f.to) &&
      (!f.clinician || c.operatorId === f.clinician) &&
      (!f.kind || c.kind === f.kind) &&
      levels.every((l) => l.codes.has(l.code(c)))
    ) {
      at[out.length] = k;
      out.push(c);
    }
  }
  // where each kept case is among the rows: the views then read their facts by position (facts.ts)
  rememberSelection(out, rows, at.slice(0, out.length));
  return out;
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

/** The outcome codes (facts.ts) of a follow-up point, or null for a milestone the facts do not keep. */
function codesAt(facts: RowFacts, at: FollowUpPoint): Uint8Array | null {
  return at === 'latest' ? facts.latest : at === 12 ? facts.at12 : at === 24 ? facts.at24 : at === 48 ? facts.at48 : null;
}

/**
 * Success at a follow-up point over a selection's facts; `sinceToday` is today's day number and
 * `due` the days after completion from which a case is due then (cases.ts isDue; lostAt = due and
 * the outcome not known).
 */
function successFigure(sel: SelectionFacts, at: FollowUpPoint, sinceToday: number, due: number, minObs: number): SuccessFigure {
  const { facts, at: pos } = sel;
  const codes = codesAt(facts, at);
  let n = 0;
  let strict = 0;
  let lenient = 0;
  let uncertain = 0;
  let missing = 0;
  for (let k = 0; k < pos.length; k++) {
    const i = pos[k]!;
    const o = codes ? codes[i]! : outcomeCode(outcomeAt(facts.cases[i]!, at, minObs));
    if (o === OUTCOME_NONE) {
      if (sinceToday - facts.completionDay[i]! >= due) missing += 1;
      continue;
    }
    if (o === OUTCOME_UNCERTAIN) {
      uncertain += 1;
      continue;
    }
    n += 1;
    strict += STRICT_SUCCESS[o]!;
    lenient += LENIENT_SUCCESS[o]!;
  }
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
  return kaplanMeier(intervals.map(kmObservation));
}

/**
 * Turnbull's estimate, or null when its EM does not converge within lib/stats' limit (it can
 * happen on a small group with awkward intervals: a level of a factor, a filtered selection).
 * The screens then show Kaplan–Meier and say why; other errors still throw.
 */
export function turnbullOrNull(intervals: readonly Interval[]): ReturnType<typeof turnbull> | null {
  try {
    return turnbull(intervals);
  } catch (e) {
    if (e instanceof Error && /did not converge/.test(e.message)) return null;
    throw e;
  }
}

/** S(t) from a step function whose rows carry `time`/`upper` and `survival` (1 before the first step). */
export function stepAt<T extends { survival: number }>(steps: readonly T[], at: (s: T) => number, t: number): T | null {
  let row: T | null = null;
  for (const s of steps) if (at(s) <= t) row = s;
  return row;
}

export function overview(selection: readonly OutcomeCase[], all: readonly OutcomeCase[], today: CalendarDate, minObs: number): Overview {
  // one pass over the selection's facts (facts.ts: the per-case rules of cases.ts, kept per rows array)
  const sel = selectionIn(selection, all, minObs);
  const { facts, at: pos } = sel;
  const n = pos.length;
  const sinceToday = dayOf(today);
  // due for a milestone (cases.ts isDue): today at least the milestone and its window after completion
  const dueAt = (months: number) => milestoneDays(months) + windowDays(months);
  const due12 = dueAt(12);
  const due24 = dueAt(24);
  const at12 = facts.at12;
  const at24 = facts.at24;
  let reviewed = 0;
  let nDue12 = 0;
  let nDue24 = 0;
  let seen12 = 0;
  let seen24 = 0;
  let lost = 0;
  let lostStillInvited = 0;
  for (let k = 0; k < n; k++) {
    const i = pos[k]!;
    const since = sinceToday - facts.completionDay[i]!;
    reviewed += facts.reviewed[i]!;
    if (since >= due12) {
      nDue12 += 1;
      if (at12[i] !== OUTCOME_NONE) seen12 += 1;
      // lost at the primary endpoint (cases.ts lostAt(c, 'latest')): due for the 12-month review, no outcome a year or more after
      if (facts.latest[i] === OUTCOME_NONE) {
        lost += 1;
        lostStillInvited += facts.openVisit[i]!;
      }
    }
    if (since >= due24) {
      nDue24 += 1;
      if (at24[i] !== OUTCOME_NONE) seen24 += 1;
    }
  }
  const completeness = [
    { months: 12, rate: rate(seen12, nDue12) },
    { months: 24, rate: rate(seen24, nDue24) },
  ];
  // each tooth once, from its earliest case in the selection (cases.ts toothLossObservations)
  const starts = toothLossStartsIn(sel);
  const intervals = new Array<Interval>(starts.length);
  const kmObs = new Array<KmObservation>(starts.length);
  let toothLossEvents = 0;
  for (let t = 0; t < starts.length; t++) {
    const i = pos[starts[t]!]!;
    const iv = facts.toothLoss[i]!;
    intervals[t] = iv;
    kmObs[t] = facts.toothLossKm[i]!;
    if (iv.right !== null) toothLossEvents += 1;
  }
  const km = kaplanMeier(kmObs);
  const tbOrNull = intervals.length > 0 && intervals.length <= TURNBULL_MAX ? turnbullOrNull(intervals) : null;
  const turnbullComputed = tbOrNull !== null;
  const tb = tbOrNull ?? [];
  const survival = SURVIVAL_YEARS.map((years) => {
    const days = milestoneDays(years * 12);
    const k = stepAt(km, (s) => s.time, days);
    let atRisk = 0;
    for (let t = 0; t < intervals.length; t++) if ((intervals[t]!.right ?? intervals[t]!.left) >= days) atRisk += 1;
    const tr = stepAt(tb, (s) => s.upper, days);
    return {
      years,
      days,
      km: { survival: k?.survival ?? 1, lower: k?.lower ?? 1, upper: k?.upper ?? 1, nRisk: atRisk },
      turnbull: turnbullComputed ? (tr?.survival ?? 1) : null,
    };
  });
  return {
    today,
    cases: n,
    reviewed,
    lost: rate(lost, nDue12),
    lostStillInvited,
    completeness,
    warning: completeness.some((c) => c.rate.n > 0 && (c.rate.estimate ?? 0) < COMPLETENESS_WARNING),
    success: [...MILESTONES, 'latest' as const].map((at) => successFigure(sel, at, sinceToday, dueAt(at === 'latest' ? 12 : at), minObs)),
    teeth: intervals.length,
    toothLossEvents,
    turnbullComputed,
    survival,
  };
}

// ---------------------------------------------------------------------------------------------
// By factor

/**
 * A factor: its words, the code of a case's level (stable, for the URL's level filters
 * `f.<factor>=<code>`), and either its closed vocabulary (every code with its words, in their
 * natural order) or, for open ones (clinician, referrer, year), what a code looks like. A field
 * that does not apply to the case's kind (no root filling after apical surgery, say) is its own
 * level, "Not applicable", apart from "Not recorded".
 */
export interface Factor {
  label: string;
  code: (c: OutcomeCase) => string;
  /** the level's words for the case (clinician and referrer: an id, named by the service) */
  level: (c: OutcomeCase) => string;
  levels?: Readonly<Record<string, string>>;
  pattern?: RegExp;
}

export const NOT_RECORDED = 'not_recorded';
export const NOT_APPLICABLE = 'not_applicable';
const MISSING = { [NOT_RECORDED]: 'Not recorded', [NOT_APPLICABLE]: 'Not applicable (no root filling)' } as const;

function closed(label: string, levels: Record<string, string>, code: (c: OutcomeCase) => string): Factor {
  return { label, code, levels, level: (c) => levels[code(c)] ?? code(c) };
}
function open(label: string, pattern: RegExp, code: (c: OutcomeCase) => string): Factor {
  return { label, code, pattern, level: code };
}
/** A recorded code of a field: "Not applicable" when the field does not apply to the case's kind, "Not recorded" when empty. */
const recorded = (field: CaseField, value: (c: OutcomeCase) => string | null | undefined) => (c: OutcomeCase) =>
  (CASE_KINDS as readonly string[]).includes(c.kind) && !fieldApplies(c.kind as CaseKind, field) ? NOT_APPLICABLE : (value(c) ?? NOT_RECORDED);

/** Complications: none, one of them, or several (levels must not overlap for the test across levels). */
const complicationCode = (c: OutcomeCase) => {
  const list = c.complications ?? [];
  return list.length === 0 ? 'none' : list.length === 1 ? list[0]! : 'several';
};

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
export const NO_REFERRER = 'none';

export const FACTORS = {
  kind: closed('Treatment kind', CASE_KIND_LABELS, (c) => c.kind),
  lesion: closed(
    'Lesion size before treatment',
    { none: 'No lesion', lt5: 'Under 5 mm', '5to10': '5 to under 10 mm', ge10: '10 mm or more' },
    (c) => (c.lesionDiameterMm <= 0 ? 'none' : c.lesionDiameterMm < 5 ? 'lt5' : c.lesionDiameterMm < 10 ? '5to10' : 'ge10'),
  ),
  pai: closed('PAI before treatment', { 1: 'PAI 1', 2: 'PAI 2', 3: 'PAI 3', 4: 'PAI 4', 5: 'PAI 5' }, (c) => String(c.baselinePai)),
  fill: closed(
    'Fill length',
    { within: 'Within 0–2 mm', short: 'Short (over 2 mm)', beyond: 'Beyond the apex', [NOT_RECORDED]: 'Not measured', [NOT_APPLICABLE]: MISSING[NOT_APPLICABLE] },
    recorded('canals.fillToApexMm', (c) => c.fillLengthClass),
  ),
  density: closed('Voids in the filling (density)', { ...FILL_DENSITY_LABELS, ...MISSING }, recorded('fillDensity', (c) => c.fillDensity)),
  group: closed('Tooth group', { incisor: 'Incisor', canine: 'Canine', premolar: 'Premolar', molar: 'Molar' }, (c) => c.toothGroup),
  arch: closed('Arch', { upper: 'Upper', lower: 'Lower' }, (c) => c.toothArch),
  sealer: closed('Sealer', { ...SEALER_CLASS_LABELS, ...MISSING }, recorded('sealerClass', (c) => c.sealerClass)),
  technique: closed('Filling technique', { ...FILLING_TECHNIQUE_LABELS, ...MISSING }, recorded('fillingTechnique', (c) => c.fillingTechnique)),
  complications: closed(
    'Complications',
    { none: 'None recorded', ...COMPLICATION_LABELS, several: 'Two or more', [NOT_APPLICABLE]: 'Not applicable (no canals treated)' },
    recorded('complications', complicationCode),
  ),
  coronal: closed('Restoration at completion', { ...COMPLETION_RESTORATION_LABELS, [NOT_RECORDED]: 'Not recorded' }, recorded('coronalRestoration', (c) => c.coronalRestoration)),
  definitive: closed(
    'Definitive restoration',
    { ...DEFINITIVE_RESTORATION_LABELS, [NOT_RECORDED]: 'None recorded' },
    recorded('definitiveRestoration', (c) => c.definitiveRestoration),
  ),
  clinician: open('Clinician', UUID, (c) => c.operatorId),
  referrer: open('Referrer', new RegExp(`^(?:${UUID.source.slice(1, -1)}|${NO_REFERRER})$`, 'i'), (c) => c.referrerId ?? NO_REFERRER),
  year: open('Year of treatment', /^\d{4}$/, (c) => c.completionDate.slice(0, 4)),
} as const satisfies Record<string, Factor>;

export type FactorKey = keyof typeof FACTORS;
export const FACTOR_KEYS = Object.keys(FACTORS) as FactorKey[];

/** The words of a level's code (open factors: the code itself; the service names clinicians and referrers). */
export function levelLabel(factor: FactorKey, code: string): string {
  const f: Factor = FACTORS[factor];
  return f.levels?.[code] ?? code;
}

/** Whether a code can be a level of the factor (its vocabulary, or its pattern). */
export function isLevelCode(factor: FactorKey, code: string): boolean {
  const f: Factor = FACTORS[factor];
  return f.levels ? Object.hasOwn(f.levels, code) : f.pattern!.test(code);
}

/** Levels with a natural order (size bands, fill length) come in that order; others alphabetically. */
const ORDERED_LEVELS = ['No lesion', 'Under 5 mm', '5 to under 10 mm', '10 mm or more', 'Within 0–2 mm', 'Short (over 2 mm)', 'Beyond the apex', 'Not measured'];
const LAST_LEVELS = ['Not recorded', 'None recorded', 'Not measured', MISSING[NOT_APPLICABLE], 'Not applicable (no canals treated)', 'No referrer recorded', 'Former clinician'];
export function levelOrder(level: string): number {
  const last = LAST_LEVELS.indexOf(level);
  if (last !== -1) return ORDERED_LEVELS.length + 1 + last;
  const i = ORDERED_LEVELS.indexOf(level);
  return i === -1 ? ORDERED_LEVELS.length : i;
}

/**
 * The order of a factor's levels by their words: a closed vocabulary in its own order; open
 * factors (and named levels) alphabetically, numbers by value, missing ones last.
 */
export function compareLevels(factor: FactorKey | null): (a: string, b: string) => number {
  const words = factor ? Object.values((FACTORS[factor] as Factor).levels ?? {}) : [];
  const rank = (l: string) => {
    const i = words.indexOf(l);
    return i === -1 ? words.length + levelOrder(l) : i;
  };
  return (a, b) => rank(a) - rank(b) || a.localeCompare(b, 'en', { numeric: true });
}

export interface FactorLevel {
  /** the level's code (URL filter `f.<factor>=<code>`) and its words */
  code: string;
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

/** Strict and lenient success at the latest review a year or more after completion, per level of a factor (`levelName` names open levels: clinicians, referrers). */
export function byFactor(selection: readonly OutcomeCase[], factor: FactorKey, minObs: number, levelName?: (code: string) => string): FactorTable {
  const codeOf = FACTORS[factor].code;
  const name = levelName ?? ((code: string) => levelLabel(factor, code));
  const groups = new Map<string, { cases: number; n: number; strict: number; lenient: number; uncertain: number }>();
  for (const c of selection) {
    const key = codeOf(c);
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
  const order = compareLevels(factor);
  const levels = [...groups.entries()]
    .map(([code, g]) => ({ code, level: name(code), cases: g.cases, strict: rate(g.strict, g.n), lenient: rate(g.lenient, g.n), uncertain: g.uncertain }))
    .sort((a, b) => order(a.level, b.level));
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

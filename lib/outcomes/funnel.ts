/**
 * The clinician audit (issue 12, item 5): a funnel plot of each clinician's strict success against
 * the practice, crude and risk-adjusted. Pure: the service reads the rows, this computes.
 *
 * - **Measure**: strict success (healed) at 12 months (`outcomeAtMilestone`) or at the latest review
 *   a year or more after completion (`outcomeAfterAYear`); a case counts when its outcome is known
 *   and not "uncertain" (as everywhere in the outcomes area; cases.ts has the definitions).
 * - **Crude**: observed ÷ judged cases of the clinician, against the practice's rate p0 (every
 *   clinician's judged cases in the selection).
 * - **Risk-adjusted** (indirect standardisation): a logistic case-mix model of strict success on
 *   lesion size (mm), treatment kind, tooth group and PAI before treatment, fitted on the practice's
 *   judged cases (lib/stats `logisticRegressionColumns`, as R's glm); a clinician's expected successes E is
 *   the sum of the predicted probabilities of their cases, O/E the ratio, and the adjusted rate
 *   O/E × p0 (Spiegelhalter DJ 2005, Funnel plots for comparing institutional performance, Stat Med
 *   24:1185–1202; Spiegelhalter 2005 Qual Saf Health Care 14:347–351 — from memory).
 * - **Limits**: exact binomial 95% and 99.8% limits around p0 for n judged cases (lib/stats
 *   `funnelLimits`, Spiegelhalter 2005). For the adjusted rate the same limits are used: an
 *   approximation that treats every case as having the practice's rate (common practice in
 *   national audits; exact limits would depend on each clinician's own case mix).
 * - **The model keeps what the data can carry**: a kind or tooth group with fewer than
 *   MIN_LEVEL_CASES judged cases, or whose cases all succeeded or all failed, joins the reference
 *   level (the commonest); a term without variation is left out; and the terms are limited so that
 *   the rarer outcome has at least EVENTS_PER_PARAMETER per coefficient (Peduzzi et al. 1996, J Clin
 *   Epidemiol 49:1373–1379 — from memory). Of the term sets that fit, the largest is used, ties in
 *   the order of TERMS. When none fits, the adjusted figures are not shown, and the screen says why.
 */
import { funnelLimits, logisticRegressionColumns } from '@/lib/stats';
import type { CaseKind } from '@/lib/registry/case-kinds';
import { isStrictSuccess, outcomeAfterAYear, outcomeAtMilestone, type OutcomeCase } from './cases';
import { FACTORS, levelLabel, rate, type Rate } from './compute';

export const FUNNEL_MEASURES = ['m12', 'latest'] as const;
export type FunnelMeasure = (typeof FUNNEL_MEASURES)[number];
export const FUNNEL_MEASURE_LABELS: Record<FunnelMeasure, string> = {
  m12: 'strict success at 12 months',
  latest: 'strict success at the latest review a year or more after completion',
};

/** Coverages of the two funnels: "2 SD" and "3 SD" (Spiegelhalter 2005). */
export const COVERAGES = [0.95, 0.998] as const;
export const MIN_LEVEL_CASES = 10;
export const EVENTS_PER_PARAMETER = 10;

export const TERMS = ['lesion', 'kind', 'group', 'pai'] as const;
export type CaseMixTerm = (typeof TERMS)[number];
export const TERM_LABELS: Record<CaseMixTerm, string> = {
  lesion: 'lesion size before treatment (mm)',
  kind: 'treatment kind',
  group: 'tooth group',
  pai: 'PAI before treatment',
};

/** Strict success for the measure: true / false, or null when the outcome is not known or uncertain. */
export function strictSuccessFor(c: OutcomeCase, measure: FunnelMeasure, minObs: number): boolean | null {
  const o = measure === 'm12' ? outcomeAtMilestone(c, 12, minObs) : outcomeAfterAYear(c, minObs);
  if (o === null || o === 'uncertain') return null;
  return isStrictSuccess(o);
}

export interface JudgedCase {
  c: OutcomeCase;
  y: boolean;
}

/** One column of the design: its value for each judged case (in the order given), and its name. */
interface Column {
  term: CaseMixTerm;
  name: string;
  values: Float64Array;
}

const levelOf: Record<'kind' | 'group', (c: OutcomeCase) => string> = { kind: FACTORS.kind.code, group: FACTORS.group.code };
/** A kind by its words; a tooth group by its code (lower case in the coefficient names). */
const levelName = (term: 'kind' | 'group', level: string) => (term === 'kind' ? levelLabel('kind', level) : level);

/** The columns a term can carry on these cases (none when it has no variation); each case's level is read once. */
function columnsOf(term: CaseMixTerm, rows: readonly JudgedCase[]): { columns: Column[]; merged: string[]; reference?: string } {
  const n = rows.length;
  if (term === 'lesion' || term === 'pai') {
    const values = new Float64Array(n);
    for (let i = 0; i < n; i++) values[i] = term === 'lesion' ? rows[i]!.c.lesionDiameterMm : rows[i]!.c.baselinePai;
    return values.some((v) => v !== values[0]) ? { columns: [{ term, name: TERM_LABELS[term], values }], merged: [] } : { columns: [], merged: [] };
  }
  const of = levelOf[term];
  const counts = new Map<string, { index: number; n: number; y: number }>();
  const levelAt = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    const r = rows[i]!;
    const k = of(r.c);
    let g = counts.get(k);
    if (!g) counts.set(k, (g = { index: counts.size, n: 0, y: 0 }));
    g.n += 1;
    if (r.y) g.y += 1;
    levelAt[i] = g.index;
  }
  const levels = [...counts.entries()].sort((a, b) => b[1].n - a[1].n || a[0].localeCompare(b[0]));
  if (levels.length < 2) return { columns: [], merged: [] };
  const reference = levels[0]![0];
  const columns: Column[] = [];
  const merged: string[] = [];
  for (const [level, g] of levels.slice(1)) {
    if (g.n < MIN_LEVEL_CASES || g.y === 0 || g.y === g.n) {
      merged.push(levelName(term, level));
      continue;
    }
    const values = new Float64Array(n);
    for (let i = 0; i < n; i++) if (levelAt[i] === g.index) values[i] = 1;
    columns.push({ term, name: `${TERM_LABELS[term]}: ${levelName(term, level)}`, values });
  }
  return { columns, merged, reference: levelName(term, reference) };
}

export interface CaseMixModel {
  /** terms in the model, in the order of TERMS */
  terms: CaseMixTerm[];
  /** coefficient names: intercept first */
  names: string[];
  coef: number[];
  /** judged cases and strict successes the model was fitted on */
  n: number;
  events: number;
  /** levels joined to the reference level (too few cases, or no variation), per term */
  merged: Partial<Record<CaseMixTerm, { reference: string; levels: string[] }>>;
  /** terms left out and why */
  left: { term: CaseMixTerm; reason: string }[];
  /** the model's probability of strict success for each judged case, in the order given */
  fitted: Float64Array;
}

function subsets<T>(items: readonly T[]): T[][] {
  const out: T[][] = [];
  for (let mask = (1 << items.length) - 1; mask > 0; mask--) out.push(items.filter((_, i) => mask & (1 << i)));
  // the largest set first; among sets of one size, the earlier terms first (the mask order does that)
  return out.sort((a, b) => b.length - a.length);
}

/** The case-mix model for these judged cases (see the top of the file), or null with the reason. */
export function fitCaseMix(rows: readonly JudgedCase[]): { model: CaseMixModel | null; reason: string | null } {
  const events = rows.filter((r) => r.y).length;
  const rarer = Math.min(events, rows.length - events);
  if (rarer === 0) return { model: null, reason: rows.length === 0 ? 'no judged cases' : 'every judged case had the same result' };
  const byTerm = new Map(TERMS.map((t) => [t, columnsOf(t, rows)]));
  const left: { term: CaseMixTerm; reason: string }[] = [];
  const usable = TERMS.filter((t) => {
    if (byTerm.get(t)!.columns.length > 0) return true;
    left.push({ term: t, reason: 'no variation (or every other level too small) in these cases' });
    return false;
  });
  const n = rows.length;
  const y = new Uint8Array(n);
  for (let i = 0; i < n; i++) if (rows[i]!.y) y[i] = 1;
  for (const set of subsets(usable)) {
    const columns = set.flatMap((t) => byTerm.get(t)!.columns);
    if (rarer < EVENTS_PER_PARAMETER * columns.length) continue;
    const p = columns.length;
    const x = new Float64Array(n * p);
    columns.forEach((col, j) => {
      for (let i = 0; i < n; i++) x[i * p + j] = col.values[i]!;
    });
    let fit;
    try {
      fit = logisticRegressionColumns({ y, p, x });
    } catch {
      continue;
    }
    const coef = fit.coef;
    const merged: CaseMixModel['merged'] = {};
    for (const t of set) {
      const m = byTerm.get(t)!;
      if (m.merged.length && m.reference) merged[t] = { reference: m.reference, levels: m.merged };
    }
    for (const t of usable) if (!set.includes(t)) left.push({ term: t, reason: `left out: too few ${events <= rows.length - events ? 'successes' : 'failures'} (${rarer}) for more terms, or the fit did not converge` });
    return {
      model: {
        terms: TERMS.filter((t) => set.includes(t)),
        names: ['(intercept)', ...columns.map((c) => c.name)],
        coef,
        n: rows.length,
        events,
        merged,
        left: left.sort((a, b) => TERMS.indexOf(a.term) - TERMS.indexOf(b.term)),
        fitted: fittedOf(coef, x, n, p),
      },
      reason: null,
    };
  }
  return {
    model: null,
    reason: usable.length === 0 ? 'no case-mix factor varies in these cases' : `too few ${events <= rows.length - events ? 'successes' : 'failures'} (${rarer}) for a case-mix model (at least ${EVENTS_PER_PARAMETER} per coefficient), or no model converged`,
  };
}

/** Each row's probability from the coefficients (intercept first) and the row-major design. */
function fittedOf(coef: readonly number[], x: Float64Array, n: number, p: number): Float64Array {
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let e = coef[0]!;
    for (let j = 0; j < p; j++) e += coef[j + 1]! * x[i * p + j]!;
    out[i] = 1 / (1 + Math.exp(-e));
  }
  return out;
}

/** Where a rate sits against the funnel at its n. */
export type Band = 'above-99.8' | 'above-95' | 'within' | 'below-95' | 'below-99.8';

export interface Limits {
  n: number;
  lower95: number;
  upper95: number;
  lower998: number;
  upper998: number;
}

export function limitsAt(p0: number, n: number): Limits {
  const a = funnelLimits(p0, n, COVERAGES[0]);
  const b = funnelLimits(p0, n, COVERAGES[1]);
  return { n, lower95: a.lower, upper95: a.upper, lower998: b.lower, upper998: b.upper };
}

export function bandOf(value: number, l: Limits): Band {
  if (value > l.upper998) return 'above-99.8';
  if (value > l.upper95) return 'above-95';
  if (value < l.lower998) return 'below-99.8';
  if (value < l.lower95) return 'below-95';
  return 'within';
}

/** The funnel's curve: limits at about `points` case counts from 1 to `maxN` (every count up to 30, then spaced geometrically). */
export function funnelCurve(p0: number, maxN: number, points = 60): Limits[] {
  const ns = new Set<number>();
  const top = Math.max(1, Math.ceil(maxN));
  for (let n = 1; n <= Math.min(30, top); n++) ns.add(n);
  if (top > 30) for (let i = 0; i <= points; i++) ns.add(Math.round(30 * Math.pow(top / 30, i / points)));
  ns.add(top);
  return [...ns].sort((a, b) => a - b).map((n) => limitsAt(p0, n));
}

export interface FunnelUnit {
  /** the clinician's user id (the service replaces it before anything reaches a browser) */
  id: string;
  /** completed cases in the selection */
  cases: number;
  /** judged cases (outcome known, not uncertain) */
  n: number;
  /** strict successes */
  observed: number;
  /** crude rate with its Wilson 95% interval */
  crude: Rate;
  crudeBand: Band | null;
  /** expected successes from the case-mix model; null without a model */
  expected: number | null;
  oe: number | null;
  /** O/E × the practice rate */
  adjusted: number | null;
  adjustedBand: Band | null;
}

export interface LiteratureLine {
  kind: CaseKind;
  rate: number;
  label: string;
  source: string;
}

/**
 * Published pooled strict success (complete healing), for reference lines. Figures from memory
 * (not re-read for this work); the studies pooled follow-up of a year or more, so they are a
 * guide for the 12-month figure, not a target.
 */
export const LITERATURE: readonly LiteratureLine[] = [
  {
    kind: 'primary_treatment',
    rate: 0.747,
    label: 'Ng et al. 2007, primary treatment: 74.7%',
    source:
      'Ng Y-L, Mann V, Rahbaran S, Lewsey J, Gulabivala K. Outcome of primary root canal treatment: systematic review of the literature, part 1. Int Endod J 2007;40:921–939 — weighted pooled success by complete healing 74.7% (from memory).',
  },
  {
    kind: 'nonsurgical_retreatment',
    rate: 0.767,
    label: 'Ng et al. 2008, retreatment: 76.7%',
    source:
      'Ng Y-L, Mann V, Gulabivala K. Outcome of secondary root canal treatment: a systematic review of the literature. Int Endod J 2008;41:1026–1046 — weighted pooled success by complete healing 76.7% (from memory).',
  },
];

/** The reference lines for a kind filter: that kind's, or every one without a filter. */
export function literatureFor(kind: string | undefined): LiteratureLine[] {
  return LITERATURE.filter((l) => !kind || l.kind === kind);
}

export interface Funnel {
  measure: FunnelMeasure;
  /** the practice's strict success among judged cases (the funnel's centre line), Wilson 95% */
  practice: Rate;
  /** completed cases in the selection */
  cases: number;
  model: Omit<CaseMixModel, 'fitted'> | null;
  /** why there is no risk adjustment (null when there is) */
  modelNote: string | null;
  units: FunnelUnit[];
  /** limits from n = 1 to a little beyond the largest clinician; empty when p0 is 0 or 1 (no funnel) */
  curve: Limits[];
}

/**
 * The funnel for a selection (every clinician's cases of the period and kind): the practice rate,
 * the model, each clinician's crude and adjusted figures, and the limits. Units are in order of
 * judged cases (most first), then id.
 */
export function funnel(selection: readonly OutcomeCase[], measure: FunnelMeasure, minObs: number): Funnel {
  const judged: JudgedCase[] = [];
  const casesBy = new Map<string, number>();
  for (const c of selection) {
    casesBy.set(c.operatorId, (casesBy.get(c.operatorId) ?? 0) + 1);
    const y = strictSuccessFor(c, measure, minObs);
    if (y !== null) judged.push({ c, y });
  }
  const x = judged.filter((j) => j.y).length;
  const practice = rate(x, judged.length);
  const p0 = practice.estimate;
  const hasFunnel = p0 !== null && p0 > 0 && p0 < 1;
  const { model, reason } = fitCaseMix(judged);
  // each clinician's judged cases, observed successes and expected ones (the sum of the model's probabilities)
  const tally = new Map<string, { n: number; observed: number; expected: number }>();
  judged.forEach((j, i) => {
    let t = tally.get(j.c.operatorId);
    if (!t) tally.set(j.c.operatorId, (t = { n: 0, observed: 0, expected: 0 }));
    t.n += 1;
    if (j.y) t.observed += 1;
    if (model) t.expected += model.fitted[i]!;
  });
  const units: FunnelUnit[] = [...casesBy.entries()].map(([id, cases]) => {
    const { n, observed, expected: sum } = tally.get(id) ?? { n: 0, observed: 0, expected: 0 };
    const crude = rate(observed, n);
    const limits = hasFunnel && n > 0 ? limitsAt(p0, n) : null;
    const expected = model && n > 0 ? sum : null;
    const oe = expected !== null && expected > 0 ? observed / expected : null;
    const adjusted = oe !== null && p0 !== null ? oe * p0 : null;
    return {
      id,
      cases,
      n,
      observed,
      crude,
      crudeBand: limits && crude.estimate !== null ? bandOf(crude.estimate, limits) : null,
      expected,
      oe,
      adjusted,
      adjustedBand: limits && adjusted !== null ? bandOf(adjusted, limits) : null,
    };
  });
  units.sort((a, b) => b.n - a.n || (a.id < b.id ? -1 : a.id > b.id ? 1 : 0));
  const maxN = Math.max(0, ...units.map((u) => u.n));
  let modelOut: Funnel['model'] = null;
  if (model) {
    const { fitted: _fitted, ...rest } = model;
    void _fitted;
    modelOut = rest;
  }
  return {
    measure,
    practice,
    cases: selection.length,
    model: modelOut,
    modelNote: model ? null : `Not risk-adjusted: ${reason}.`,
    units,
    curve: hasFunnel && maxN > 0 ? funnelCurve(p0, Math.ceil(maxN * 1.15) + 1) : [],
  };
}

/** Plain words for a band, for tables and the report. */
export const BAND_WORDS: Record<Band, string> = {
  'above-99.8': 'above the 99.8% limit',
  'above-95': 'above the 95% limit',
  within: 'within the limits',
  'below-95': 'below the 95% limit',
  'below-99.8': 'below the 99.8% limit',
};

export const FUNNEL_CAUTION =
  'A point outside the limits is a prompt to look at the case mix and the records, not a verdict on a clinician. Small numbers vary by chance; the figures support clinical judgement and do not replace it.';

/**
 * Multivariable models of the outcomes area (issue 12, item 4), from the rows of cases.ts. Pure.
 *
 * - The design matrix (`designMatrix`): each chosen factor of FACTORS becomes indicator columns
 *   against a reference level, the most frequent level (the first in the factor's order on a tie).
 *   A level with fewer than MIN_LEVEL_ROWS rows is merged: into its smaller neighbour for an
 *   ordered factor (lesion bands, PAI, year), else into one pooled "Other" level; a pooled level
 *   still too small is left out with its rows. A factor left with one level is dropped. Lesion
 *   diameter and baseline PAI may instead enter as numbers (one coefficient per mm / per PAI point,
 *   assuming a log-linear effect). Every merge, drop and left-out row is said in `notes`.
 * - The Cox model (`coxModel`): time to failure to heal (disease, retreatment, surgery or extraction)
 *   or to tooth loss. A failure found at a recall visit lies between the last clear review and the
 *   review that found it; the model takes the MIDPOINT of that interval (Law & Brookmeyer 1992: less
 *   biased than the date of the review that found it when visit intervals differ between teeth);
 *   no-failure cases are right-censored at their last review; cases with no review are left out.
 *   Efron ties; robust standard errors clustered by patient (several teeth per patient), as R
 *   coxph(..., cluster = patient) (Lin & Wei 1989).
 * - The logistic model (`logisticModel`): strict success (healed) at the 12-month milestone
 *   (`outcomeAtMilestone`; a retreatment, surgery or extraction found by then is a failure; uncertain
 *   and not seen left out), with HC1 cluster-robust standard errors by patient as
 *   sandwich::vcovCL(type = "HC1").
 * - Events per variable below EPV_MIN (10; Peduzzi et al. 1995 for Cox, 1996 for logistic
 *   regression) set `lowEpv`. For the logistic model the "events" are the rarer outcome.
 * - Separation (a level with no events, or only successes or only failures) is found before the fit
 *   and named; any other failure of the fit (no convergence, collinearity) is reported in `error`:
 *   a model that cannot be fitted is a message, never an exception.
 */
import { coxPHColumns, logisticRegressionColumns } from '@/lib/stats';
import type { Interval } from '@/lib/scoring';
import { patientNumbers, type OutcomeCase } from './cases';
import { FACTORS, levelOrder, type FactorKey } from './compute';
import { everyIndex, OUTCOME_NONE, OUTCOME_UNCERTAIN, selectionIn, STRICT_SUCCESS, toothLossStartsIn, type RowFacts, type SelectionFacts } from './facts';

/** A level with fewer rows than this is merged (or left out). */
export const MIN_LEVEL_ROWS = 10;
/** Events per variable below this: the warning (Peduzzi et al. 1995, 1996). */
export const EPV_MIN = 10;
/**
 * A fitted log ratio beyond this (a ratio above e^10 ≈ 22,000 or below 1/22,000) is taken as
 * quasi-separation that the fit did not stop on (common practice: such a coefficient is a symptom
 * of separation, not an effect), and the model is reported as not estimable.
 */
export const MAX_ABS_COEF = 10;

/** Factors that may enter as a number instead of levels, with their unit. */
export const NUMERIC_COVARIATES = {
  lesion: { label: 'Lesion diameter before treatment', per: 'per mm', value: (c: OutcomeCase) => c.lesionDiameterMm },
  pai: { label: 'PAI before treatment', per: 'per PAI point', value: (c: OutcomeCase) => c.baselinePai },
} as const satisfies Partial<Record<FactorKey, { label: string; per: string; value: (c: OutcomeCase) => number }>>;
export type NumericKey = keyof typeof NUMERIC_COVARIATES;
export const isNumericKey = (k: string): k is NumericKey => k in NUMERIC_COVARIATES;

/** Factors whose levels have an order: a small level merges with a neighbour, not into "Other". */
export const ORDERED_FACTORS: readonly FactorKey[] = ['lesion', 'pai', 'year'];

/** Factors offered as covariates (every factor of FACTORS: a categorical factor enters as levels). */
export const COVARIATE_KEYS = Object.keys(FACTORS) as FactorKey[];
/** The choice when none is made: treatment kind, lesion size (bands) and baseline PAI (per point). */
export const DEFAULT_COVARIATES: CovariateChoice[] = [{ key: 'kind' }, { key: 'lesion' }, { key: 'pai', numeric: true }];

export interface CovariateChoice {
  key: FactorKey;
  /** lesion and pai only: enter as a number (one coefficient) rather than as levels */
  numeric?: boolean;
}

export interface DesignColumn {
  covariate: FactorKey;
  /** the factor's label, e.g. "Tooth group" */
  label: string;
  /** the level this column indicates, or the unit of a numeric covariate ("per mm") */
  term: string;
  numeric: boolean;
  /** the reference level of a categorical covariate */
  reference: string | null;
}

export interface Design {
  columns: DesignColumn[];
  /**
   * the covariates of the kept rows, row-major (one typed array, no array per row):
   * x[k * columns.length + j] is column j of the k-th kept row; `designRow` gives one row
   */
  x: Float64Array;
  /** indices (into the input) of the rows kept */
  rows: Int32Array;
  /** reference level of each categorical covariate kept, with its number of rows */
  references: { covariate: FactorKey; label: string; level: string; rows: number }[];
  /** merges, drops and left-out rows, in plain words */
  notes: string[];
}

type LevelName = (key: FactorKey, level: string) => string;
const sortLevels = (a: string, b: string) => levelOrder(a) - levelOrder(b) || a.localeCompare(b, 'en', { numeric: true });

/**
 * The chosen covariates as read from each case, once per selection (the Cox and the logistic model
 * take different subsets of it): a factor's level as an index into its levels (in order of first
 * appearance), a numeric covariate's value. Duplicate choices are dropped here.
 */
interface Covariates {
  /** the number of cases read */
  n: number;
  read: ({ choice: CovariateChoice; numeric: false; level: Int32Array; levels: string[] } | { choice: CovariateChoice; numeric: true; value: Float64Array })[];
}

/** The choices without repeats (the first of a key kept), each marked numeric only where its key can be. */
function distinctChoices(choices: readonly CovariateChoice[]): { key: FactorKey; numeric: boolean }[] {
  const out = new Map<FactorKey, { key: FactorKey; numeric: boolean }>();
  for (const c of choices) if (!out.has(c.key)) out.set(c.key, { key: c.key, numeric: c.numeric === true && isNumericKey(c.key) });
  return [...out.values()];
}

function readCovariates(cases: readonly OutcomeCase[], choices: readonly CovariateChoice[]): Covariates {
  const n = cases.length;
  const read: Covariates['read'] = [];
  for (const choice of distinctChoices(choices)) {
    if (choice.numeric && isNumericKey(choice.key)) {
      const value = NUMERIC_COVARIATES[choice.key].value;
      const values = new Float64Array(n);
      for (let i = 0; i < n; i++) values[i] = value(cases[i]!);
      read.push({ choice: { key: choice.key, numeric: true }, numeric: true, value: values });
      continue;
    }
    const levelOfCase = FACTORS[choice.key].level;
    const index = new Map<string, number>();
    const levels: string[] = [];
    const level = new Int32Array(n);
    for (let i = 0; i < n; i++) {
      const l = levelOfCase(cases[i]!);
      let j = index.get(l);
      if (j === undefined) {
        j = levels.length;
        index.set(l, j);
        levels.push(l);
      }
      level[i] = j;
    }
    read.push({ choice: { key: choice.key }, numeric: false, level, levels });
  }
  return { n, read };
}

/** Each covariate read once over every case of a rows array's facts (readCovariates), kept with the facts. */
const readOverRows = new WeakMap<RowFacts, Map<string, Covariates['read'][number]>>();

/**
 * readCovariates of a selection, from each covariate read once over the rows it was selected from:
 * a numeric covariate's values gathered, a factor's levels renumbered in order of first appearance
 * in the selection (as readCovariates numbers them). The same Covariates, without a string per case.
 */
function covariatesOfSelection(s: SelectionFacts, choices: readonly CovariateChoice[]): Covariates {
  let kept = readOverRows.get(s.facts);
  if (!kept) readOverRows.set(s.facts, (kept = new Map()));
  const at = s.at;
  const n = at.length;
  const read: Covariates['read'] = [];
  for (const choice of distinctChoices(choices)) {
    const id = `${choice.key}:${choice.numeric}`;
    let whole = kept.get(id);
    if (!whole) kept.set(id, (whole = readCovariates(s.facts.cases, [choice]).read[0]!));
    if (whole.numeric) {
      const values = new Float64Array(n);
      for (let k = 0; k < n; k++) values[k] = whole.value[at[k]!]!;
      read.push({ choice: whole.choice, numeric: true, value: values });
      continue;
    }
    const renumber = new Int32Array(whole.levels.length).fill(-1);
    const levels: string[] = [];
    const level = new Int32Array(n);
    for (let k = 0; k < n; k++) {
      const j = whole.level[at[k]!]!;
      let r = renumber[j]!;
      if (r === -1) {
        r = renumber[j] = levels.length;
        levels.push(whole.levels[j]!);
      }
      level[k] = r;
    }
    read.push({ choice: whole.choice, numeric: false, level, levels });
  }
  return { n, read };
}

/**
 * The design matrix of the chosen covariates on the given rows (see the top of this file for the
 * rules). `levelName` turns a level into its shown name (clinician ids into names).
 */
export function designMatrix(cases: readonly OutcomeCase[], choices: readonly CovariateChoice[], opts: { minLevel?: number; levelName?: LevelName } = {}): Design {
  return designOf(readCovariates(cases, choices), null, opts);
}

/**
 * The design matrix on the rows `subset` (indices into the cases the covariates were read from; null:
 * all of them, in order). The design's `rows` are positions in `subset`.
 */
function designOf(cov: Covariates, subset: Int32Array | null, opts: { minLevel?: number; levelName?: LevelName }): Design {
  const minLevel = opts.minLevel ?? MIN_LEVEL_ROWS;
  const name: LevelName = opts.levelName ?? ((_k, l) => l);
  const notes: string[] = [];
  const n = subset ? subset.length : cov.n;
  const at = (k: number) => (subset ? subset[k]! : k);
  const keep = new Uint8Array(n).fill(1);
  interface Plan {
    choice: CovariateChoice;
    label: string;
    /** numeric: the value of each case read */
    value?: Float64Array;
    /** per row (position in the subset): the index of its merged level, or -1 when the row is left out */
    level?: Int32Array;
    /** shown names of the merged levels (made unique) */
    levels?: string[];
    reference?: number;
  }
  const plans: Plan[] = [];
  for (const r of cov.read) {
    const choice = r.choice;
    if (r.numeric) {
      const spec = NUMERIC_COVARIATES[choice.key as NumericKey];
      let same = true;
      for (let k = 0; k < n && same; k++) same = r.value[at(k)] === r.value[at(0)];
      if (n === 0 || same) {
        notes.push(`${spec.label} is left out: it is the same in every case of this selection.`);
        continue;
      }
      plans.push({ choice, label: spec.label, value: r.value });
      continue;
    }
    const label = FACTORS[choice.key].label;
    // rows per level in these rows, the levels in order of first appearance here
    const rowsOf = new Int32Array(r.levels.length);
    const order: number[] = [];
    for (let k = 0; k < n; k++) {
      const j = r.level[at(k)]!;
      if (rowsOf[j] === 0) order.push(j);
      rowsOf[j]! += 1;
    }
    const counts = new Map<string, number>(order.map((j) => [r.levels[j]!, rowsOf[j]!]));
    // groups: each merged level is a list of original levels
    let groups = [...counts.keys()].sort(sortLevels).map((l) => [l]);
    const size = (g: string[]) => g.reduce((s, l) => s + counts.get(l)!, 0);
    const show = (g: string[]) => g.map((l) => name(choice.key, l)).join(' + ');
    const left = new Set<string>();
    let leftNote: string | null = null;
    if (ORDERED_FACTORS.includes(choice.key)) {
      for (;;) {
        if (groups.length < 2) break;
        let small = -1;
        for (let i = 0; i < groups.length; i++) if (size(groups[i]!) < minLevel && (small === -1 || size(groups[i]!) < size(groups[small]!))) small = i;
        if (small === -1) break;
        const prev = small > 0 ? small - 1 : -1;
        const next = small < groups.length - 1 ? small + 1 : -1;
        const into = prev === -1 ? next : next === -1 ? prev : size(groups[prev]!) <= size(groups[next]!) ? prev : next;
        const merged = into < small ? [...groups[into]!, ...groups[small]!] : [...groups[small]!, ...groups[into]!];
        notes.push(`${label}: ${show(groups[small]!)} (${size(groups[small]!)} cases) merged with ${show(groups[into]!)}, fewer than ${minLevel} cases.`);
        groups = groups.map((g, i) => (i === Math.min(small, into) ? merged : g)).filter((_, i) => i !== Math.max(small, into));
      }
    } else {
      const rare = groups.filter((g) => size(g) < minLevel);
      if (rare.length > 0 && groups.length > 1) {
        const pooled = rare.flat();
        groups = groups.filter((g) => size(g) >= minLevel);
        if (rare.length > 1 && size(pooled) >= minLevel) {
          groups.push(pooled);
          notes.push(`${label}: ${show(pooled)} pooled into one level (each had fewer than ${minLevel} cases).`);
        } else {
          for (const l of pooled) left.add(l);
          leftNote = `${label}: ${size(pooled)} cases of ${show(pooled)} left out of the model, fewer than ${minLevel} cases.`;
        }
      }
    }
    if (groups.length < 2) {
      // the factor is not in the model, so its rare levels' rows stay in
      notes.push(`${label} is left out: ${groups.length === 1 && left.size === 0 ? 'one level only in this selection' : `fewer than two levels with ${minLevel} cases or more`}.`);
      continue;
    }
    if (leftNote) notes.push(leftNote);
    // merged level of each level read (-1: left out), then of each row
    const indexOf = new Map(r.levels.map((l, j) => [l, j]));
    const mergedOf = new Int32Array(r.levels.length).fill(-1);
    groups.forEach((g, k) => g.forEach((l) => (mergedOf[indexOf.get(l)!] = k)));
    const level = new Int32Array(n);
    for (let k = 0; k < n; k++) {
      const m = mergedOf[r.level[at(k)]!]!;
      level[k] = m;
      if (m === -1) keep[k] = 0;
    }
    // shown names, unique even when two levels share a name (e.g. two former clinicians)
    const names: string[] = [];
    for (const g of groups) {
      const base = show(g);
      let nm = base;
      for (let k = 2; names.includes(nm); k++) nm = `${base} (${k})`;
      names.push(nm);
    }
    let reference = 0;
    groups.forEach((g, k) => {
      if (size(g) > size(groups[reference]!)) reference = k;
    });
    plans.push({ choice, label, level, levels: names, reference });
  }
  let kept = 0;
  for (let k = 0; k < n; k++) kept += keep[k]!;
  const rows = new Int32Array(kept);
  for (let k = 0, r = 0; k < n; k++) if (keep[k] === 1) rows[r++] = k;
  const columns: DesignColumn[] = [];
  for (const p of plans) {
    if (p.value) columns.push({ covariate: p.choice.key, label: p.label, term: NUMERIC_COVARIATES[p.choice.key as NumericKey].per, numeric: true, reference: null });
    else p.levels!.forEach((l, k) => k !== p.reference && columns.push({ covariate: p.choice.key, label: p.label, term: l, numeric: false, reference: p.levels![p.reference!]! }));
  }
  // the columns of each plan, side by side: a number, or one indicator per level but the reference
  const width = columns.length;
  const x = new Float64Array(kept * width);
  const referenceRows = new Array<number>(plans.length).fill(0);
  let offset = 0;
  plans.forEach((p, q) => {
    if (p.value) {
      const value = p.value;
      for (let r = 0; r < kept; r++) x[r * width + offset] = value[at(rows[r]!)]!;
      offset += 1;
      return;
    }
    const level = p.level!;
    const ref = p.reference!;
    for (let r = 0; r < kept; r++) {
      const l = level[rows[r]!]!;
      if (l === ref) referenceRows[q]! += 1;
      else x[r * width + offset + (l < ref ? l : l - 1)] = 1;
    }
    offset += p.levels!.length - 1;
  });
  const references = plans.flatMap((p, q) => (p.value ? [] : [{ covariate: p.choice.key, label: p.label, level: p.levels![p.reference!]!, rows: referenceRows[q]! }]));
  return { columns, x, rows, references, notes };
}

/** Row k of a design (its kept row k) as an array, in the order of `columns`. */
export function designRow(d: Pick<Design, 'columns' | 'x'>, k: number): number[] {
  const p = d.columns.length;
  return Array.from(d.x.subarray(k * p, (k + 1) * p));
}

export interface ModelTerm extends DesignColumn {
  coef: number;
  se: number;
  robustSe: number | null;
  /** hazard ratio (Cox) or odds ratio (logistic) */
  ratio: number;
  lower: number;
  upper: number;
  pValue: number;
}

export interface ModelFit {
  model: 'cox' | 'logistic';
  /** rows in the model (teeth or cases) and distinct patients among them */
  cases: number;
  patients: number;
  /** Cox: failures; logistic: the rarer outcome (successes or failures) */
  events: number;
  /** logistic: cases healed / not healed at 12 months */
  successes: number | null;
  failures: number | null;
  parameters: number;
  /** events per variable (null without parameters) */
  epv: number | null;
  lowEpv: boolean;
  references: Design['references'];
  notes: string[];
  terms: ModelTerm[];
  /** why the model could not be fitted (no events, separation, no convergence, collinearity), or null */
  error: string | null;
}

export type ModelEndpoint = 'healing' | 'tooth';

/** What both models read of a selection's cases, each case read once (multivariable shares it between them). */
interface Selection {
  cases: readonly OutcomeCase[];
  /** where each case's facts are (lib/outcomes/facts.ts: outcomes, healing and tooth-loss observations) */
  facts: SelectionFacts;
  covariates: Covariates;
  /** each case's patient as a number 0..patients-1 (lib/outcomes/cases.ts patientNumbers) */
  patient: Int32Array;
  patients: number;
}

/** `all`: the rows `cases` were selected from (their facts and patients' numbers are kept per `all`), or null. */
function readSelection(cases: readonly OutcomeCase[], all: readonly OutcomeCase[] | null, choices: readonly CovariateChoice[], minObs: number): Selection {
  const { patient, count } = patientNumbers(cases, all);
  const facts = selectionIn(cases, all ?? cases, minObs);
  return { cases, facts, covariates: covariatesOfSelection(facts, choices), patient, patients: count };
}

/**
 * The patient of each design row (`subset[rows[k]]` in the selection) as a cluster 0..G-1, numbered in
 * order of first appearance as lib/stats numbers cluster ids (so the fit is the one of the row API, to
 * the last bit), and G, the number of distinct patients.
 */
function clustersOf(sel: Selection, subset: Int32Array, rows: Int32Array): { cluster: Int32Array; patients: number } {
  const seen = new Int32Array(sel.patients).fill(-1);
  const cluster = new Int32Array(rows.length);
  let G = 0;
  for (let k = 0; k < rows.length; k++) {
    const p = sel.patient[subset[rows[k]!]!]!;
    let g = seen[p]!;
    if (g === -1) seen[p] = g = G++;
    cluster[k] = g;
  }
  return { cluster, patients: G };
}

function baseFit(model: ModelFit['model'], design: Design, notes: string[], events: number, patients: number, extra: Partial<ModelFit>): ModelFit {
  const parameters = design.columns.length;
  const epv = parameters > 0 ? events / parameters : null;
  return {
    model,
    cases: design.rows.length,
    patients,
    events,
    successes: null,
    failures: null,
    parameters,
    epv,
    lowEpv: epv !== null && epv < EPV_MIN,
    references: design.references,
    notes: [...notes, ...design.notes],
    terms: [],
    error: null,
    ...extra,
  };
}

/** The plain reason a fit failed, from lib/stats' message. */
export function fitProblem(e: unknown, columns: readonly DesignColumn[]): string {
  const m = e instanceof Error ? e.message : String(e);
  const col = /covariate (\d+)/.exec(m);
  const which = col && columns[Number(col[1])] ? ` (${columns[Number(col[1])]!.label}: ${columns[Number(col[1])]!.term})` : '';
  if (/infinite|separation|monotone/i.test(m)) return `The model cannot be estimated: a ratio runs to infinity${which} (separation: a level with no events, or only one outcome). Leave that factor out or choose a wider selection.`;
  if (/converge/i.test(m)) return `The model did not converge${which}. Choose fewer factors or a wider selection.`;
  if (/collinear|singular|constant/i.test(m)) return `The factors chosen carry the same information (collinear)${which}, so their effects cannot be told apart. Leave one of them out.`;
  if (/event|both outcomes|same/i.test(m)) return 'The model needs both outcomes among the cases: there are none of one of them in this selection.';
  if (/more rows|at least two/i.test(m)) return 'Too few cases for this many factors.';
  return 'The model could not be fitted on these cases.';
}

/** A level (indicator column) whose rows all have the same outcome, or the reference level so: named before the fit. */
function separated(design: Design, y: Uint8Array, what: 'cox' | 'logistic'): string | null {
  const check = (label: string, rows: number, pos: number) => {
    if (rows === 0) return null;
    if (what === 'cox' && pos === 0) return `${label} has no events`;
    if (what === 'logistic' && (pos === 0 || pos === rows)) return `${label} has ${pos === 0 ? 'no successes' : 'only successes'}`;
    return null;
  };
  // rows and positive outcomes of each indicator column, and of each reference level (all its factor's columns 0), in one pass
  const p = design.columns.length;
  const m = design.rows.length;
  const indicator = design.columns.map((c) => !c.numeric);
  const refColumns = design.references.map((ref) => design.columns.map((c, k) => (c.covariate === ref.covariate && !c.numeric ? k : -1)).filter((k) => k >= 0));
  const colRows = new Int32Array(p);
  const colPos = new Int32Array(p);
  const refRows = new Int32Array(refColumns.length);
  const refPos = new Int32Array(refColumns.length);
  const x = design.x;
  for (let k = 0; k < m; k++) {
    const o = k * p;
    const yk = y[k]!;
    for (let j = 0; j < p; j++) {
      if (indicator[j] && x[o + j] === 1) {
        colRows[j]! += 1;
        colPos[j]! += yk;
      }
    }
    for (let r = 0; r < refColumns.length; r++) {
      if (refColumns[r]!.every((j) => x[o + j] === 0)) {
        refRows[r]! += 1;
        refPos[r]! += yk;
      }
    }
  }
  const found: string[] = [];
  design.columns.forEach((c, k) => {
    if (c.numeric) return;
    const r = check(`${c.label}: ${c.term}`, colRows[k]!, colPos[k]!);
    if (r) found.push(r);
  });
  design.references.forEach((ref, q) => {
    const r = check(`${ref.label}: ${ref.level} (reference)`, refRows[q]!, refPos[q]!);
    if (r) found.push(r);
  });
  return found.length === 0 ? null : `The model cannot be estimated: ${found.join('; ')} (separation: its ratio would be infinite). Leave that factor out or choose a wider selection.`;
}

/** The time of a Cox row from an interval: midpoint of (left, right] for a failure, left when censored. */
export function coxTime(i: { left: number; right: number | null }): { time: number; event: boolean } {
  if (i.right === null) return { time: i.left, event: false };
  return { time: (i.left + i.right) / 2, event: true };
}

/**
 * Cox model of failure to heal (`healing`, one row per case) or tooth loss (`tooth`, one row per
 * tooth from its earliest case in the selection, followed across later cases from `all`).
 */
export function coxModel(
  selection: readonly OutcomeCase[],
  all: readonly OutcomeCase[],
  choices: readonly CovariateChoice[],
  opts: { endpoint: ModelEndpoint; minObs: number; levelName?: LevelName; minLevel?: number },
): ModelFit {
  return coxOf(readSelection(selection, all, choices, opts.minObs), opts);
}

function coxOf(sel: Selection, opts: { endpoint: ModelEndpoint; minObs: number; levelName?: LevelName; minLevel?: number }): ModelFit {
  // the model's cases (indices into the selection) and their intervals (lib/outcomes/facts.ts)
  const { facts, at } = sel.facts;
  let cases: Int32Array;
  let column: Interval[];
  if (opts.endpoint === 'tooth') {
    // each tooth once, from its earliest case in the selection, followed across later cases (cases.ts toothLossStarts / toothLossFrom)
    cases = toothLossStartsIn(sel.facts);
    column = facts.toothLoss;
  } else {
    cases = everyIndex(at.length);
    column = facts.healing;
  }
  const intervals = new Array<Interval>(cases.length);
  for (let k = 0; k < cases.length; k++) intervals[k] = column[at[cases[k]!]!]!;
  let nFollowed = 0;
  const isFollowed = (iv: Interval) => !(iv.left === 0 && iv.right === null);
  for (const iv of intervals) if (isFollowed(iv)) nFollowed += 1;
  const followed = new Int32Array(nFollowed);
  for (let i = 0, f = 0; i < intervals.length; i++) if (isFollowed(intervals[i]!)) followed[f++] = i;
  const notes: string[] = [];
  if (followed.length < cases.length) notes.push(`${cases.length - followed.length} ${opts.endpoint === 'tooth' ? 'teeth' : 'cases'} with no review yet left out.`);
  const rows = followed.map((i) => cases[i]!);
  const design = designOf(sel.covariates, rows, opts);
  // the design's rows as columns: time and event (coxTime), patient
  const m = design.rows.length;
  const time = new Float64Array(m);
  const y = new Uint8Array(m);
  let events = 0;
  for (let k = 0; k < m; k++) {
    const o = coxTime(intervals[followed[design.rows[k]!]!]!);
    time[k] = o.time;
    if (o.event) {
      y[k] = 1;
      events += 1;
    }
  }
  const { cluster, patients } = clustersOf(sel, rows, design.rows);
  const fit = baseFit('cox', design, notes, events, patients, {});
  if (design.columns.length === 0) return { ...fit, error: 'No factor is left in the model: choose at least one factor with two or more levels in this selection.' };
  if (events === 0) return { ...fit, error: 'No failures among these cases: a Cox model needs events.' };
  const sep = separated(design, y, 'cox');
  if (sep) return { ...fit, error: sep };
  try {
    const r = coxPHColumns({ time, event: y, p: design.columns.length, x: design.x, cluster });
    const terms = termsOf(design.columns, r.coef, r.se, r.robustSe ?? null, r.hazardRatio, r.lower, r.upper, r.pValue);
    const far = runaway(terms);
    return far ? { ...fit, error: far } : { ...fit, terms };
  } catch (e) {
    return { ...fit, error: fitProblem(e, design.columns) };
  }
}

/** Logistic model of strict success (healed) at the 12-month milestone, one row per judged case. */
export function logisticModel(
  selection: readonly OutcomeCase[],
  choices: readonly CovariateChoice[],
  opts: { minObs: number; levelName?: LevelName; minLevel?: number },
): ModelFit {
  return logisticOf(readSelection(selection, null, choices, opts.minObs), opts);
}

function logisticOf(sel: Selection, opts: { minObs: number; levelName?: LevelName; minLevel?: number }): ModelFit {
  // the outcome at 12 months (cases.ts outcomeAtMilestone, as facts.ts codes it); strict success = healed
  const { facts, at } = sel.facts;
  const at12 = facts.at12;
  const judgedAt = new Int32Array(at.length);
  const outcomes = new Uint8Array(at.length);
  let judgedN = 0;
  let uncertain = 0;
  for (let i = 0; i < at.length; i++) {
    const o = at12[at[i]!]!;
    if (o === OUTCOME_NONE) continue;
    if (o === OUTCOME_UNCERTAIN) {
      uncertain += 1;
      continue;
    }
    outcomes[judgedN] = STRICT_SUCCESS[o]!;
    judgedAt[judgedN++] = i;
  }
  const judged = judgedAt.subarray(0, judgedN);
  const notes = uncertain > 0 ? [`${uncertain} cases scored uncertain at 12 months left out.`] : [];
  const design = designOf(sel.covariates, judged, opts);
  const y = new Uint8Array(design.rows.length);
  let successes = 0;
  for (let k = 0; k < y.length; k++) successes += y[k] = outcomes[design.rows[k]!]!;
  const failures = y.length - successes;
  const { cluster, patients } = clustersOf(sel, judged, design.rows);
  const fit = baseFit('logistic', design, notes, Math.min(successes, failures), patients, { successes, failures });
  if (design.columns.length === 0) return { ...fit, error: 'No factor is left in the model: choose at least one factor with two or more levels in this selection.' };
  if (successes === 0 || failures === 0) return { ...fit, error: 'The model needs both outcomes among the cases: there are none of one of them in this selection.' };
  const sep = separated(design, y, 'logistic');
  if (sep) return { ...fit, error: sep };
  try {
    const r = logisticRegressionColumns({ y, p: design.columns.length, x: design.x, cluster });
    // drop the intercept
    const s = <T>(a: readonly T[]) => a.slice(1);
    const terms = termsOf(design.columns, s(r.coef), s(r.se), r.robustSe ? s(r.robustSe) : null, s(r.oddsRatio), s(r.lower), s(r.upper), s(r.pValue));
    const far = runaway(terms);
    return far ? { ...fit, error: far } : { ...fit, terms };
  } catch (e) {
    return { ...fit, error: fitProblem(e, design.columns) };
  }
}

/** The message for terms whose ratio runs towards 0 or infinity (see MAX_ABS_COEF), or null. */
export function runaway(terms: readonly ModelTerm[]): string | null {
  const bad = terms.filter((t) => !(Math.abs(t.coef) <= MAX_ABS_COEF));
  if (bad.length === 0) return null;
  return `The model cannot be estimated reliably: the ratio of ${bad.map((t) => `${t.label}: ${t.term}`).join('; ')} runs towards ${bad[0]!.coef > 0 ? 'infinity' : '0'} (quasi-separation: almost all its cases have one outcome). Leave that factor out or choose a wider selection.`;
}

function termsOf(
  columns: readonly DesignColumn[],
  coef: readonly number[],
  se: readonly number[],
  robustSe: readonly number[] | null,
  ratio: readonly number[],
  lower: readonly number[],
  upper: readonly number[],
  pValue: readonly number[],
): ModelTerm[] {
  return columns.map((c, k) => ({ ...c, coef: coef[k]!, se: se[k]!, robustSe: robustSe ? robustSe[k]! : null, ratio: ratio[k]!, lower: lower[k]!, upper: upper[k]!, pValue: pValue[k]! }));
}

export interface Multivariable {
  endpoint: ModelEndpoint;
  covariates: CovariateChoice[];
  cox: ModelFit;
  logistic: ModelFit;
}

/** Both models on one selection. */
export function multivariable(
  selection: readonly OutcomeCase[],
  all: readonly OutcomeCase[],
  covariates: readonly CovariateChoice[],
  opts: { endpoint: ModelEndpoint; minObs: number; levelName?: LevelName },
): Multivariable {
  // the selection's cases read once for both models
  const sel = readSelection(selection, all, covariates, opts.minObs);
  return {
    endpoint: opts.endpoint,
    covariates: [...covariates],
    cox: coxOf(sel, opts),
    logistic: logisticOf(sel, opts),
  };
}

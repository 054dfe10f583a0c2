/**
 * The per-case facts of cases.ts laid out as columns (typed arrays) per rows array, so that a view's
 * first request for a new filter is a pass over numbers, not a walk through each case object's memos
 * (issue 12, speed: the cached rows of a data version are immutable, lib/services/outcomes-cache.ts).
 *
 * - `rowFacts(all, minObs)`: one entry per case of `all`, built once per array and minimum
 *   observation time (kept in a WeakMap: a new data version is a new array), from the functions of
 *   cases.ts (so the same values: outcomes at the milestones and after a year, the completion day,
 *   the healing observation, the tooth-loss observation followed from the case across `all`…).
 * - `selectionIn(selection, all, minObs)`: where each case of a selection is among the facts. A
 *   selection made by `applyFilter` remembers its positions (`rememberSelection`); any other array of
 *   the same case objects is found through a map of `all`; a selection of other objects gets facts
 *   of its own (tooth loss still followed across `all`).
 * Pure: no database.
 */
import { daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import type { Interval, ReviewOutcome } from '@/lib/scoring';
import { competingEvent, healingObservation, isLenientSuccess, isStrictSuccess, outcomeAfterAYear, outcomeAtMilestone, toothLossFrom, type OutcomeCase } from './cases';

/** An outcome as a small number: 0 not known (null), then healed, healing, uncertain, any failure. */
export const OUTCOME_NONE = 0;
export const OUTCOME_HEALED = 1;
export const OUTCOME_HEALING = 2;
export const OUTCOME_UNCERTAIN = 3;
export const OUTCOME_FAILURE = 4;
export function outcomeCode(o: ReviewOutcome | null): number {
  return o === null ? OUTCOME_NONE : o === 'healed' ? OUTCOME_HEALED : o === 'healing' ? OUTCOME_HEALING : o === 'uncertain' ? OUTCOME_UNCERTAIN : OUTCOME_FAILURE;
}
/** 1 where an outcome code is a strict / a lenient success: cases.ts isStrictSuccess and isLenientSuccess (the one rule) of the code's outcome. */
const CODE_OUTCOME: readonly ReviewOutcome[] = ['healed', 'healing', 'uncertain', 'disease'];
const successByCode = (isSuccess: (o: ReviewOutcome) => boolean) => Uint8Array.from([0, ...CODE_OUTCOME.map((o) => (isSuccess(o) ? 1 : 0))]);
export const STRICT_SUCCESS = successByCode(isStrictSuccess);
export const LENIENT_SUCCESS = successByCode(isLenientSuccess);

/** A Kaplan–Meier observation of an interval: the event at the review that found it (compute.ts kmOf, curves.ts, the overview). */
export interface KmObservation {
  time: number;
  event: boolean;
}
export const kmObservation = (i: Interval): KmObservation => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true });

/** Days from 1970-01-01 to `date` (the completion days' origin). */
export const dayOf = (date: CalendarDate): number => daysBetween('1970-01-01', date);

/** 0, 1, …, n - 1 (a plain loop: Int32Array.from(keys()) walks an iterator, ~10 ms at 100,000). */
export function everyIndex(n: number): Int32Array {
  const out = new Int32Array(n);
  for (let k = 0; k < n; k++) out[k] = k;
  return out;
}

export interface RowFacts {
  /** the cases, in order: fact k is of cases[k] */
  cases: readonly OutcomeCase[];
  minObs: number;
  /** days from 1970-01-01 to the completion date */
  completionDay: Int32Array;
  /** outcomeAtMilestone at 12, 24 and 48 months and outcomeAfterAYear, as outcomeCode */
  at12: Uint8Array;
  at24: Uint8Array;
  at48: Uint8Array;
  latest: Uint8Array;
  /** 1 when the case has a review */
  reviewed: Uint8Array;
  /** 1 when the desk still invites (OutcomeCase.openVisit) */
  openVisit: Uint8Array;
  /** the first position in `cases` of the case's id, and of its previous case's id (-1: not among them) */
  idAt: Int32Array;
  previousAt: Int32Array;
  /** the healing observation of the case (healingObservation), and its Kaplan–Meier observation */
  healing: Interval[];
  healingKm: KmObservation[];
  /** the tooth-loss observation followed from the case (toothLossFrom across `all`), and its Kaplan–Meier observation */
  toothLoss: Interval[];
  toothLossKm: KmObservation[];
  /** the case's first competing event, or its censoring (cases.ts competingEvent) */
  competing: { time: number; cause: string | null }[];
  /** built lazily (selections of other arrays of the same objects): position of each case object */
  position?: Map<OutcomeCase, number>;
}

/** The facts' columns, allocated, and the first position of each id (filled by fillFacts). */
function newFacts(cases: readonly OutcomeCase[], minObs: number): { f: RowFacts; firstOf: Map<string, number> } {
  const n = cases.length;
  const f: RowFacts = {
    cases,
    minObs,
    completionDay: new Int32Array(n),
    at12: new Uint8Array(n),
    at24: new Uint8Array(n),
    at48: new Uint8Array(n),
    latest: new Uint8Array(n),
    reviewed: new Uint8Array(n),
    openVisit: new Uint8Array(n),
    idAt: new Int32Array(n),
    previousAt: new Int32Array(n),
    healing: new Array<Interval>(n),
    healingKm: new Array<KmObservation>(n),
    toothLoss: new Array<Interval>(n),
    toothLossKm: new Array<KmObservation>(n),
    competing: new Array<{ time: number; cause: string | null }>(n),
  };
  const firstOf = new Map<string, number>();
  for (let k = 0; k < n; k++) {
    const id = cases[k]!.id;
    if (!firstOf.has(id)) firstOf.set(id, k);
  }
  return { f, firstOf };
}

/** The facts of cases[from..to). */
function fillFacts(f: RowFacts, firstOf: ReadonlyMap<string, number>, all: readonly OutcomeCase[], from: number, to: number): void {
  const { cases, minObs } = f;
  for (let k = from; k < to; k++) {
    const c = cases[k]!;
    f.completionDay[k] = dayOf(c.completionDate);
    f.at12[k] = outcomeCode(outcomeAtMilestone(c, 12, minObs));
    f.at24[k] = outcomeCode(outcomeAtMilestone(c, 24, minObs));
    f.at48[k] = outcomeCode(outcomeAtMilestone(c, 48, minObs));
    f.latest[k] = outcomeCode(outcomeAfterAYear(c, minObs));
    f.reviewed[k] = c.reviews.length > 0 ? 1 : 0;
    f.openVisit[k] = c.openVisit ? 1 : 0;
    f.idAt[k] = firstOf.get(c.id)!;
    f.previousAt[k] = c.previousCaseId ? (firstOf.get(c.previousCaseId) ?? -1) : -1;
    f.healing[k] = healingObservation(c, minObs);
    f.healingKm[k] = kmObservation(f.healing[k]!);
    f.competing[k] = competingEvent(c);
    const loss = toothLossFrom(c, all, minObs);
    f.toothLoss[k] = loss;
    f.toothLossKm[k] = kmObservation(loss);
  }
}

function buildFacts(cases: readonly OutcomeCase[], all: readonly OutcomeCase[], minObs: number): RowFacts {
  const { f, firstOf } = newFacts(cases, minObs);
  fillFacts(f, firstOf, all, 0, cases.length);
  return f;
}

const factsOf = new WeakMap<readonly OutcomeCase[], RowFacts>();

/** The facts of every case of `all` (see the top of this file), built once per array and minimum observation time. */
export function rowFacts(all: readonly OutcomeCase[], minObs: number): RowFacts {
  let f = factsOf.get(all);
  if (!f || f.minObs !== minObs) {
    f = buildFacts(all, all, minObs);
    factsOf.set(all, f);
  }
  return f;
}

/**
 * rowFacts built `slice` cases at a time with `pause()` between slices, for background work (the
 * outcomes warmer) that must not hold a server's requests up for the whole pass (about a second at
 * 100,000 cases). The same facts as rowFacts; kept only when complete, so a reader in between builds
 * its own (rowFacts) and that one is kept.
 */
export async function rowFactsInSlices(all: readonly OutcomeCase[], minObs: number, pause: () => Promise<void>, slice = 5000): Promise<RowFacts> {
  const kept = factsOf.get(all);
  if (kept && kept.minObs === minObs) return kept;
  const { f, firstOf } = newFacts(all, minObs);
  for (let from = 0; from < all.length; from += slice) {
    await pause();
    fillFacts(f, firstOf, all, from, Math.min(all.length, from + slice));
  }
  const now = factsOf.get(all);
  if (now && now.minObs === minObs) return now;
  factsOf.set(all, f);
  return f;
}

/** Positions of applyFilter's results in the rows they were selected from. */
const selections = new WeakMap<readonly OutcomeCase[], { from: readonly OutcomeCase[]; at: Int32Array }>();

/** Remembers that `selection[k]` is `from[at[k]]` (applyFilter calls it; neither array may be changed after). */
export function rememberSelection(selection: readonly OutcomeCase[], from: readonly OutcomeCase[], at: Int32Array): void {
  selections.set(selection, { from, at });
}

/** A selection's facts: `facts` and, for the selection's k-th case, its position `at[k]` in them. */
export interface SelectionFacts {
  facts: RowFacts;
  at: Int32Array;
}

/** Where the cases of `selection` are among the facts of `all` (or facts of their own when they are not cases of `all`). */
export function selectionIn(selection: readonly OutcomeCase[], all: readonly OutcomeCase[], minObs: number): SelectionFacts {
  const remembered = selections.get(selection);
  // (its length and ends checked: an array changed since would be found through the map below)
  const n = selection.length;
  if (remembered && remembered.from === all && remembered.at.length === n && (n === 0 || (selection[0] === all[remembered.at[0]!] && selection[n - 1] === all[remembered.at[n - 1]!]))) {
    return { facts: rowFacts(all, minObs), at: remembered.at };
  }
  if (selection === all) return { facts: rowFacts(all, minObs), at: everyIndex(all.length) };
  const facts = rowFacts(all, minObs);
  if (!facts.position) {
    const position = new Map<OutcomeCase, number>();
    for (let k = all.length - 1; k >= 0; k--) position.set(all[k]!, k); // the first position of an object listed twice
    facts.position = position;
  }
  const at = new Int32Array(selection.length);
  for (let k = 0; k < selection.length; k++) {
    const p = facts.position.get(selection[k]!);
    if (p === undefined) return { facts: buildFacts(selection, all, minObs), at: everyIndex(selection.length) };
    at[k] = p;
  }
  return { facts, at };
}

/**
 * The positions (into `s.at`) of the cases that start a tooth's follow-up in the selection: as
 * cases.ts `toothLossStarts`, a case whose previous case (by id) is not in the selection.
 */
export function toothLossStartsIn(s: SelectionFacts): Int32Array {
  const { facts, at } = s;
  const selected = new Uint8Array(facts.cases.length);
  for (let k = 0; k < at.length; k++) selected[facts.idAt[at[k]!]!] = 1;
  const starts = new Int32Array(at.length);
  let m = 0;
  for (let k = 0; k < at.length; k++) {
    const prev = facts.previousAt[at[k]!]!;
    if (prev === -1 || selected[prev] === 0) starts[m++] = k;
  }
  return starts.subarray(0, m);
}

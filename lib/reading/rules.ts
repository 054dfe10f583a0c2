/**
 * The reading queue's rules (issue 13): which follow-up films get a blinded second reading, when
 * two readings need adjudication, which score is agreed, and the agreement figures. Pure: no ORM,
 * no next/*, no I/O — the service (lib/services/readings.ts) reads and writes, these decide.
 */
import { assessRecordedReview, type RecordedCase } from '../scoring';
import type { ClinicalSigns } from '../scoring';
import { cohenKappaInterval, type KappaInterval } from '../stats/kappa';

export const READING_KINDS = ['first', 'second', 'adjudication', 'reference-exercise'] as const;
export type ReadingKind = (typeof READING_KINDS)[number];

export const READING_KIND_LABELS: Record<ReadingKind, string> = {
  first: 'First reading',
  second: 'Blinded second reading',
  adjudication: 'Adjudication',
  'reference-exercise': 'Calibration exercise',
};

/** The PAI scale every kappa is computed on (weights from the full 1–5 scale). */
export const PAI_SCALE = [1, 2, 3, 4, 5] as const;

/** The practice setting's default share of films read a second time (besides every "disease"). */
export const DEFAULT_SECOND_READING_PERCENT = 20;

/** Readings more than this many PAI steps apart go to adjudication (Lamina's rule: one step is tolerated). */
export const ADJUDICATION_STEPS = 1;

/** A calibration exercise older than this is flagged (the issue: repeat yearly). */
export const CALIBRATION_MAX_DAYS = 365;

/**
 * A number in [0, 100) from the film's id: FNV-1a 32-bit of its text with MurmurHash3's final mix. The same film always falls on
 * the same side of the share, on every server and after every restart (reproducible selection).
 */
export function filmShareBucket(filmId: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < filmId.length; i++) {
    h ^= filmId.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  // MurmurHash3's finaliser: FNV alone leaves ids that differ in their last characters close together
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b) >>> 0;
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35) >>> 0;
  h ^= h >>> 16;
  h >>>= 0;
  return (h / 2 ** 32) * 100;
}

/** True when the film falls in the practice's random-looking (but fixed) share for a second reading. */
export function inSecondReadingShare(filmId: string, percent: number): boolean {
  if (!Number.isFinite(percent) || percent < 0 || percent > 100) throw new RangeError(`second-reading share must be 0–100 %, got ${String(percent)}`);
  return filmShareBucket(filmId) < percent;
}

export interface FirstReadingContext {
  /** The case's completion date and PAI before treatment; null completion: not a follow-up yet. */
  case: { completionDate: string | null; baselinePai: number };
  /** The day the film shows (acquisition date, else the day it was filed). */
  filmDate: string;
  pai: number;
  signs: ClinicalSigns;
  minObservationDays?: number;
}

/**
 * Whether a first reading means disease, by lib/scoring's one rule (`assessRecordedReview`: the
 * case's PAI before treatment against this PAI, the clinical signs, the practice's minimum
 * observation time). A case without a completion date cannot be judged: false.
 */
export function firstReadingMeansDisease(ctx: FirstReadingContext): boolean {
  if (!ctx.case.completionDate || ctx.filmDate < ctx.case.completionDate) return false;
  const c: RecordedCase = { completionDate: ctx.case.completionDate, baselinePai: ctx.case.baselinePai };
  return assessRecordedReview(c, { reviewDate: ctx.filmDate, toothStatus: 'present', paiScore: ctx.pai, signs: ctx.signs }, ctx.minObservationDays).outcome === 'disease';
}

/** Every film whose first reading means disease, plus the practice's share, gets a blinded second reading. */
export function needsSecondReading(filmId: string, percent: number, meansDisease: boolean): boolean {
  return meansDisease || inSecondReadingShare(filmId, percent);
}

/** Two readings more than one PAI step apart need a third reader (or the lead's consensus). */
export function needsAdjudication(a: number, b: number): boolean {
  return Math.abs(a - b) > ADJUDICATION_STEPS;
}

export interface FilmReadingRow {
  kind: ReadingKind;
  readerId: string;
  pai: number;
  /** ISO instant; later readings of the same kind by the same reader replace nothing: every reading is kept. */
  at: string;
}

export type FilmReadingStatus = 'awaiting-first' | 'awaiting-second' | 'awaiting-adjudication' | 'agreed';

export interface FilmReadingState {
  status: FilmReadingStatus;
  /** The agreed PAI once settled; null before. */
  agreedPai: number | null;
  /** How the agreed score was reached. */
  basis: 'first' | 'first-within-one-step' | 'adjudication' | null;
  firstReaderId: string | null;
  secondReaderId: string | null;
}

/**
 * The state of a film's readings (kept in full; the earliest of each kind counts). Without a second
 * reading needed, the first reading is the agreed score; with both within one step the first
 * reading stands (the second is kept for agreement figures); further apart, the adjudication's score.
 */
export function filmReadingState(readings: readonly FilmReadingRow[], secondNeeded: (firstPai: number) => boolean): FilmReadingState {
  const earliest = (kind: ReadingKind) => readings.filter((r) => r.kind === kind).sort((a, b) => a.at.localeCompare(b.at))[0];
  const first = earliest('first');
  const none: FilmReadingState = { status: 'awaiting-first', agreedPai: null, basis: null, firstReaderId: null, secondReaderId: null };
  if (!first) return none;
  if (!secondNeeded(first.pai)) return { status: 'agreed', agreedPai: first.pai, basis: 'first', firstReaderId: first.readerId, secondReaderId: null };
  const second = earliest('second');
  if (!second) return { ...none, status: 'awaiting-second', firstReaderId: first.readerId };
  if (!needsAdjudication(first.pai, second.pai)) {
    return { status: 'agreed', agreedPai: first.pai, basis: 'first-within-one-step', firstReaderId: first.readerId, secondReaderId: second.readerId };
  }
  const adj = earliest('adjudication');
  if (!adj) return { status: 'awaiting-adjudication', agreedPai: null, basis: null, firstReaderId: first.readerId, secondReaderId: second.readerId };
  return { status: 'agreed', agreedPai: adj.pai, basis: 'adjudication', firstReaderId: first.readerId, secondReaderId: second.readerId };
}

export interface PairAgreement {
  /** The two readers, ids in ascending order (kappa does not depend on which reader is "first"). */
  readers: [string, string];
  n: number;
  linear: KappaInterval | null;
  quadratic: KappaInterval | null;
  /** Why kappa could not be computed (e.g. both readers used one score only). */
  note: string | null;
}

function kappaOrNull(pairs: [number, number][], weights: 'linear' | 'quadratic'): KappaInterval | null {
  try {
    return cohenKappaInterval(pairs, { weights, scale: PAI_SCALE });
  } catch {
    return null;
  }
}

/**
 * Weighted kappa (linear and quadratic, full 1–5 scale) with 95% intervals for each pair of readers
 * who both read the same films (first against blinded second reading).
 */
export function readerPairAgreement(films: readonly { first: { readerId: string; pai: number }; second: { readerId: string; pai: number } }[]): PairAgreement[] {
  const byPair = new Map<string, { readers: [string, string]; pairs: [number, number][] }>();
  for (const f of films) {
    const swap = f.first.readerId > f.second.readerId;
    const readers: [string, string] = swap ? [f.second.readerId, f.first.readerId] : [f.first.readerId, f.second.readerId];
    const key = readers.join('|');
    const entry = byPair.get(key) ?? { readers, pairs: [] };
    entry.pairs.push(swap ? [f.second.pai, f.first.pai] : [f.first.pai, f.second.pai]);
    byPair.set(key, entry);
  }
  return [...byPair.values()]
    .map(({ readers, pairs }) => agreementOf(readers, pairs))
    .sort((a, b) => b.n - a.n || a.readers.join().localeCompare(b.readers.join()));
}

/** Below this many films a kappa (and its interval) says nothing; one film is agreement or not. */
export const MIN_FILMS_FOR_KAPPA = 2;

function agreementOf<R>(readers: R, pairs: [number, number][]): { readers: R; n: number; linear: KappaInterval | null; quadratic: KappaInterval | null; note: string | null } {
  if (pairs.length < MIN_FILMS_FOR_KAPPA) {
    return { readers, n: pairs.length, linear: null, quadratic: null, note: `Kappa needs at least ${MIN_FILMS_FOR_KAPPA} films read by both.` };
  }
  const linear = kappaOrNull(pairs, 'linear');
  const quadratic = kappaOrNull(pairs, 'quadratic');
  const note = linear ? (pairs.length < 10 ? 'Few films: the interval is wide.' : null) : 'Kappa is undefined: both readers gave one and the same score throughout.';
  return { readers, n: pairs.length, linear, quadratic, note };
}

export interface CalibrationResult {
  readerId: string;
  n: number;
  linear: KappaInterval | null;
  quadratic: KappaInterval | null;
  note: string | null;
  /** ISO date of the reader's latest exercise reading; null when never. */
  lastExercise: string | null;
  /** True when there is no exercise or the latest is over CALIBRATION_MAX_DAYS old. */
  due: boolean;
}

/**
 * A reader's calibration against the practice's reference set: their latest exercise reading of each
 * reference film against its reference score; the exercise is due again after a year.
 */
export function calibration(
  readerId: string,
  reference: ReadonlyMap<string, number>,
  exercises: readonly { filmId: string; pai: number; at: string }[],
  today: string,
): CalibrationResult {
  const latest = new Map<string, { pai: number; at: string }>();
  for (const e of exercises) {
    if (!reference.has(e.filmId)) continue;
    const seen = latest.get(e.filmId);
    if (!seen || seen.at < e.at) latest.set(e.filmId, { pai: e.pai, at: e.at });
  }
  const pairs: [number, number][] = [...latest.entries()].map(([filmId, r]) => [reference.get(filmId)!, r.pai]);
  const last = [...latest.values()].map((r) => r.at.slice(0, 10)).sort().at(-1) ?? null;
  const due = last === null || daysBetweenIso(last, today) > CALIBRATION_MAX_DAYS;
  if (pairs.length === 0) return { readerId, n: 0, linear: null, quadratic: null, note: 'No calibration exercise yet.', lastExercise: null, due: true };
  const a = agreementOf(readerId, pairs);
  return { readerId, n: a.n, linear: a.linear, quadratic: a.quadratic, note: a.note, lastExercise: last, due };
}

function daysBetweenIso(from: string, to: string): number {
  return Math.round((Date.parse(`${to}T00:00:00Z`) - Date.parse(`${from}T00:00:00Z`)) / 86_400_000);
}

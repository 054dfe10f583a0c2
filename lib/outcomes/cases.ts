/**
 * The outcomes area's input: one row per completed case with its reviews as recorded, and the
 * rules that turn a case into an outcome at a milestone, into follow-up, and into tooth-loss
 * observations. Pure: no database (lib/services/outcomes.ts reads the rows in one query).
 *
 * Definitions (each screen names the one it uses in its method line):
 * - A milestone of M months is `milestoneDays(M)` days after completion (M × 365.25 / 12, rounded).
 *   Its window is ± WINDOW_DAYS(M) (3 months at 12 months, 6 months later on).
 * - A case is **due** for a milestone once the window has ended (today ≥ completion + M + window).
 * - A case is **seen** at a milestone when it has a review inside the window, or a terminal event
 *   (extraction, retreatment, apical surgery) found on or before the window's end: its outcome is known.
 * - The **outcome at a milestone**: a terminal event found on or before the window's end (a failure);
 *   otherwise the outcome (lib/scoring `assessRecordedReview`, the practice's minimum observation
 *   time) of the review in the window closest to the milestone (the later one on a tie).
 * - The **outcome at the latest review a year or more after completion**: a terminal event at any
 *   time, otherwise the latest review on day 365 or later.
 * - **Lost to follow-up** (the one definition; `lostAt`): a case **due** for a milestone whose outcome
 *   then is **not known** — at 12, 24 or 48 months: due and not seen in the window; at the registry's
 *   primary endpoint, the latest review a year or more after completion: due for the 12-month review
 *   and neither a review on or after day 365 nor a tooth event. This is loss to follow-up as outcome
 *   studies count it — the participants whose outcome at the endpoint was not ascertained, whatever
 *   the reason (recall rate = reviewed ÷ due; e.g. Ng et al. 2007, Int Endod J 40:921, report
 *   recall rates so; STROBE item 13 asks for the numbers not followed). It does not depend on the
 *   desk: a recall visit "closed — lost to follow-up" records that the practice stopped inviting,
 *   one reason among others (missed, declined, never invited), and a case closed so and seen later
 *   is not lost. `openVisit` tells how many lost cases the desk is still inviting.
 * - **Tooth loss**: lib/scoring `caseObservations` over the case's reviews and those of the cases
 *   that follow it on the same tooth (retreatment, surgery); each tooth counted once, from its
 *   earliest case in the selection.
 */
import { daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import { assessRecordedReview, caseObservations, currentOutcome, recordedHistory, type Interval, type RecordedReview, type ReviewOutcome } from '@/lib/scoring';

export interface OutcomeCase {
  id: string;
  patientId: string;
  operatorId: string;
  kind: string;
  completionDate: CalendarDate;
  /** PAI before treatment (1–5). */
  baselinePai: number;
  lesionDiameterMm: number;
  fillLengthClass: 'within' | 'short' | 'beyond' | null;
  toothGroup: string;
  toothArch: 'upper' | 'lower';
  previousCaseId: string | null;
  /**
   * Treatment and restoration as recorded (codes of lib/schemas/case.ts; null or absent when not
   * recorded). Optional so rows built by hand (tests, other views) need not name them.
   */
  fillDensity?: string | null;
  sealerClass?: string | null;
  fillingTechnique?: string | null;
  complications?: readonly string[];
  coronalRestoration?: string | null;
  definitiveRestoration?: string | null;
  referrerId?: string | null;
  /** A recall visit of the case is still open (planned, invited, confirmed) or missed and not yet closed: the desk is still inviting. */
  openVisit: boolean;
  /** Reviews in date order. */
  reviews: RecordedReview[];
}

export const MILESTONES = [12, 24, 48] as const;
export const SURVIVAL_YEARS = [1, 2, 4] as const;

export function milestoneDays(months: number): number {
  return Math.round((months * 365.25) / 12);
}

export function windowDays(months: number): number {
  return months <= 12 ? milestoneDays(3) : milestoneDays(6);
}

const daysOf = (c: OutcomeCase, r: RecordedReview) => daysSinceCompletion(c, r.reviewDate);

/**
 * What the rules below derive from one case, computed once per case object and minimum observation
 * time: the outcomes service keeps the practice's rows between requests (lib/services/outcomes-cache.ts)
 * so each view then costs a pass over cached facts. Rows are never changed after they are read; a
 * changed case is a new object.
 */
interface CaseMemo {
  minObs: number;
  atMilestone: Map<number, ReviewOutcome | null>;
  afterAYear?: ReviewOutcome | null;
  current?: ReviewOutcome | null;
  healing?: Interval;
}
/** Kept on the case object under a symbol (invisible to JSON and Object.keys; faster than a WeakMap at 100,000 cases). */
const MEMO = Symbol('outcomes memo');
const COMPLETION_DAY = Symbol('completion day');
/** The tooth-loss observation from this case and the case objects that followed it on the tooth when it was computed (toothLossFrom). */
const CHAIN = Symbol('tooth-loss memo');
/** The case's patient as a number among the patients of the rows it was numbered with (numberPatients). */
const PATIENT = Symbol('patient number');
type Memoised = OutcomeCase & {
  [MEMO]?: CaseMemo;
  [COMPLETION_DAY]?: number;
  [CHAIN]?: { minObs: number; followers: OutcomeCase[]; loss: Interval };
  [PATIENT]?: { of: readonly OutcomeCase[]; n: number };
};
function memoOf(c: OutcomeCase, minObs: number): CaseMemo {
  const x = c as Memoised;
  let m = x[MEMO];
  if (!m || m.minObs !== minObs) {
    m = { minObs, atMilestone: new Map() };
    Object.defineProperty(x, MEMO, { value: m, writable: true, enumerable: false, configurable: true });
  }
  return m;
}
/** Days from completion to `date`. */
function daysSinceCompletion(c: OutcomeCase, date: CalendarDate): number {
  const x = c as Memoised;
  let day = x[COMPLETION_DAY];
  if (day === undefined) {
    day = daysBetween('1970-01-01', c.completionDate);
    Object.defineProperty(x, COMPLETION_DAY, { value: day, enumerable: false });
  }
  return daysBetween('1970-01-01', date) - day;
}
const isTerminal = (r: RecordedReview) => r.toothStatus !== 'present';

export function outcomeOf(c: OutcomeCase, r: RecordedReview, minObservationDays: number): ReviewOutcome {
  return assessRecordedReview({ completionDate: c.completionDate, baselinePai: c.baselinePai }, r, minObservationDays).outcome;
}

/** Whether the window of the milestone has ended by `today`. */
export function isDue(c: OutcomeCase, months: number, today: CalendarDate): boolean {
  return daysSinceCompletion(c, today) >= milestoneDays(months) + windowDays(months);
}

/** The outcome at a milestone, or null when the case was not seen then (see the top of this file). */
export function outcomeAtMilestone(c: OutcomeCase, months: number, minObservationDays: number): ReviewOutcome | null {
  const m = memoOf(c, minObservationDays);
  let o = m.atMilestone.get(months);
  if (o === undefined) {
    o = computeOutcomeAtMilestone(c, months, minObservationDays);
    m.atMilestone.set(months, o);
  }
  return o;
}

function computeOutcomeAtMilestone(c: OutcomeCase, months: number, minObservationDays: number): ReviewOutcome | null {
  const at = milestoneDays(months);
  const w = windowDays(months);
  const terminal = c.reviews.find((r) => isTerminal(r) && daysOf(c, r) <= at + w);
  if (terminal) return outcomeOf(c, terminal, minObservationDays);
  let best: RecordedReview | null = null;
  let bestGap = Infinity;
  for (const r of c.reviews) {
    const d = daysOf(c, r);
    if (isTerminal(r) || d < at - w || d > at + w) continue;
    const gap = Math.abs(d - at);
    if (gap <= bestGap) {
      best = r;
      bestGap = gap;
    }
  }
  return best ? outcomeOf(c, best, minObservationDays) : null;
}

/** The outcome at the latest review a year or more after completion (a terminal event at any time counts). */
export function outcomeAfterAYear(c: OutcomeCase, minObservationDays: number): ReviewOutcome | null {
  const m = memoOf(c, minObservationDays);
  if (m.afterAYear === undefined) m.afterAYear = computeOutcomeAfterAYear(c, minObservationDays);
  return m.afterAYear;
}

function computeOutcomeAfterAYear(c: OutcomeCase, minObservationDays: number): ReviewOutcome | null {
  const terminal = c.reviews.find(isTerminal);
  if (terminal) return outcomeOf(c, terminal, minObservationDays);
  const late = c.reviews.filter((r) => daysOf(c, r) >= 365);
  return late.length ? outcomeOf(c, late[late.length - 1]!, minObservationDays) : null;
}

/**
 * The case's current outcome: lib/scoring `currentOutcome` of its reviews, each scored by
 * `assessRecordedReview` (null without a review). What the non-healing worklist's rule starts from.
 */
export function currentOutcomeOf(c: OutcomeCase, minObservationDays: number): ReviewOutcome | null {
  const m = memoOf(c, minObservationDays);
  if (m.current === undefined) {
    m.current = currentOutcome(c.reviews.map((r) => ({ daysSinceTreatment: daysOf(c, r), outcome: outcomeOf(c, r, minObservationDays) })));
  }
  return m.current;
}

/** A milestone in months, or 'latest': the latest review a year or more after completion. */
export type FollowUpPoint = number | 'latest';

/** The outcome at a milestone or at the latest review a year or more after completion. */
export function outcomeAt(c: OutcomeCase, at: FollowUpPoint, minObservationDays: number): ReviewOutcome | null {
  return at === 'latest' ? outcomeAfterAYear(c, minObservationDays) : outcomeAtMilestone(c, at, minObservationDays);
}

/**
 * Lost to follow-up at a milestone (or at 'latest', due from the 12-month review on): due, and the
 * outcome then is not known (the definition at the top of this file).
 */
export function lostAt(c: OutcomeCase, at: FollowUpPoint, today: CalendarDate, minObservationDays: number): boolean {
  return isDue(c, at === 'latest' ? 12 : at, today) && outcomeAt(c, at, minObservationDays) === null;
}

export const isStrictSuccess = (o: ReviewOutcome) => o === 'healed';
export const isLenientSuccess = (o: ReviewOutcome) => o === 'healed' || o === 'healing';

/**
 * Tooth-loss observations of a selection: each tooth once, from its earliest case in the
 * selection, followed across the cases that come after it (taken from `all`).
 */
export function toothLossObservations(selection: readonly OutcomeCase[], all: readonly OutcomeCase[], minObservationDays: number): Interval[] {
  return toothLossStarts(selection).map((c) => toothLossFrom(c, all, minObservationDays));
}

const CAUSE_OF: Record<string, string | undefined> = { retreated: 'retreatment', surgery: 'apical surgery', extracted: 'extraction' };

/**
 * The case's first retreatment, apical surgery or extraction (days from completion to its own date
 * when known, else to the review that recorded it) as a competing event; else censored at the last
 * review (time 0 without one). curves.ts draws their cumulative incidence.
 */
export function competingEvent(c: OutcomeCase): { time: number; cause: string | null } {
  const first = c.reviews.find((r) => r.toothStatus !== 'present');
  if (first) return { time: daysBetween(c.completionDate, first.eventDate ?? first.reviewDate), cause: CAUSE_OF[first.toothStatus]! };
  const last = c.reviews[c.reviews.length - 1];
  return { time: last ? daysBetween(c.completionDate, last.reviewDate) : 0, cause: null };
}

/** The cases of a selection that start a tooth's follow-up in it (the earliest case of each tooth in the selection), in selection order. */
export function toothLossStarts(selection: readonly OutcomeCase[]): OutcomeCase[] {
  const selected = new Set(selection.map((c) => c.id));
  return selection.filter((c) => !(c.previousCaseId && selected.has(c.previousCaseId)));
}

/** Per `all` array: the case that follows each case on its tooth, and the tooth-loss observation from each case (memo). */
const chainMemo = new WeakMap<readonly OutcomeCase[], { minObs: number; next: Map<string, OutcomeCase>; loss: Map<OutcomeCase, Interval> }>();

/** The tooth-loss observation of the tooth followed from case `c` across the cases after it (taken from `all`). */
export function toothLossFrom(c: OutcomeCase, all: readonly OutcomeCase[], minObservationDays: number): Interval {
  let memo = chainMemo.get(all);
  if (!memo || memo.minObs !== minObservationDays) {
    const next = new Map<string, OutcomeCase>();
    for (const x of all) if (x.previousCaseId) next.set(x.previousCaseId, x);
    memo = { minObs: minObservationDays, next, loss: new Map() };
    chainMemo.set(all, memo);
  }
  const hit = memo.loss.get(c);
  if (hit) return hit;
  const next = memo.next;
  const followers: OutcomeCase[] = [];
  const seen = new Set([c.id]);
  for (let n = next.get(c.id); n && !seen.has(n.id); n = next.get(n.id)) {
    seen.add(n.id);
    followers.push(n);
  }
  // the same case objects as when last computed (another `all` of a newer data version in which this
  // tooth's cases did not change): the same observation
  const x = c as Memoised;
  const kept = x[CHAIN];
  if (kept && kept.minObs === minObservationDays && kept.followers.length === followers.length && kept.followers.every((f, i) => f === followers[i])) {
    memo.loss.set(c, kept.loss);
    return kept.loss;
  }
  const reviews: RecordedReview[] = [...c.reviews];
  for (const n of followers) reviews.push(...n.reviews.filter((r) => r.reviewDate >= c.completionDate));
  reviews.sort((a, b) => (a.reviewDate < b.reviewDate ? -1 : a.reviewDate > b.reviewDate ? 1 : 0));
  const loss = caseObservations(recordedHistory({ completionDate: c.completionDate, baselinePai: c.baselinePai }, reviews), { minObservationDays }).toothLoss;
  memo.loss.set(c, loss);
  Object.defineProperty(x, CHAIN, { value: { minObs: minObservationDays, followers, loss }, writable: true, enumerable: false, configurable: true });
  return loss;
}

/** Healing-endpoint observations of a selection (one per case). */
export function healingObservations(selection: readonly OutcomeCase[], minObservationDays: number): Interval[] {
  return selection.map((c) => healingObservation(c, minObservationDays));
}

export function healingObservation(c: OutcomeCase, minObservationDays: number): Interval {
  const m = memoOf(c, minObservationDays);
  m.healing ??= caseObservations(recordedHistory({ completionDate: c.completionDate, baselinePai: c.baselinePai }, c.reviews), { minObservationDays }).healing;
  return m.healing;
}

/** Patients of each `all` array numbered by numberPatients: how many. */
const patientCounts = new WeakMap<readonly OutcomeCase[], number>();

/**
 * Numbers the patients of `all` 0..P-1 (in order of first appearance) and keeps each case's number on
 * the case object with the array it was numbered in, once per array; returns P. A model's clusters
 * (lib/outcomes/model.ts) are then an array lookup per case instead of a map keyed by patient id per
 * request (about ten times slower at 100,000 cases).
 */
export function numberPatients(all: readonly OutcomeCase[]): number {
  const known = patientCounts.get(all);
  if (known !== undefined) return known;
  const ids = new Map<string, number>();
  for (const c of all) {
    let n = ids.get(c.patientId);
    if (n === undefined) ids.set(c.patientId, (n = ids.size));
    const x = c as Memoised;
    const v = { of: all, n };
    if (x[PATIENT] === undefined) Object.defineProperty(x, PATIENT, { value: v, writable: true, enumerable: false, configurable: true });
    else x[PATIENT] = v;
  }
  patientCounts.set(all, ids.size);
  return ids.size;
}

/**
 * The patient of each of `cases` as a number among the patients of `all` (numberPatients), and how
 * many numbers there are. Without `all`, or with cases not in `all` (or numbered since with another
 * array): the patients of `cases` numbered by id, nothing kept. Equal numbers, same patient, either way.
 */
export function patientNumbers(cases: readonly OutcomeCase[], all: readonly OutcomeCase[] | null): { patient: Int32Array; count: number } {
  const patient = new Int32Array(cases.length);
  for (let attempt = 0; all !== null && attempt < 2; attempt++) {
    const count = numberPatients(all);
    let k = 0;
    for (; k < cases.length; k++) {
      const p = (cases[k] as Memoised)[PATIENT];
      if (p === undefined || p.of !== all) break;
      patient[k] = p.n;
    }
    if (k === cases.length) return { patient, count };
    // a case numbered with another array since: number `all` again, once
    patientCounts.delete(all);
  }
  const ids = new Map<string, number>();
  for (let k = 0; k < cases.length; k++) {
    const id = cases[k]!.patientId;
    let n = ids.get(id);
    if (n === undefined) ids.set(id, (n = ids.size));
    patient[k] = n;
  }
  return { patient, count: ids.size };
}

/**
 * Everything the views derive per case, computed now and kept on the case object (and, for tooth
 * loss and the patient's number, per `all`): the outcomes at the milestones, after a year and the
 * current one, the healing interval, the tooth-loss interval followed from the case and the number
 * of its patient among `all` (numberPatients). The web server does it for the
 * rows it reads at start, in the background (lib/services/outcomes-warm.ts), so that the first
 * request of a view for a new filter computes only that view's figures.
 */
export function deriveCaseFacts(c: OutcomeCase, all: readonly OutcomeCase[], minObservationDays: number): void {
  for (const m of MILESTONES) outcomeAtMilestone(c, m, minObservationDays);
  outcomeAfterAYear(c, minObservationDays);
  currentOutcomeOf(c, minObservationDays);
  healingObservation(c, minObservationDays);
  toothLossFrom(c, all, minObservationDays);
  numberPatients(all);
}

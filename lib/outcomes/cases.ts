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
 * - **Lost to follow-up**: a recall visit of the case closed as lost to follow-up.
 * - **Tooth loss**: lib/scoring `caseObservations` over the case's reviews and those of the cases
 *   that follow it on the same tooth (retreatment, surgery); each tooth counted once, from its
 *   earliest case in the selection.
 */
import { daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import { assessRecordedReview, caseObservations, recordedHistory, type Interval, type RecordedReview, type ReviewOutcome } from '@/lib/scoring';

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
  /** A recall visit of the case was closed as lost to follow-up. */
  lost: boolean;
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

const daysOf = (c: OutcomeCase, r: RecordedReview) => daysBetween(c.completionDate, r.reviewDate);
const isTerminal = (r: RecordedReview) => r.toothStatus !== 'present';

export function outcomeOf(c: OutcomeCase, r: RecordedReview, minObservationDays: number): ReviewOutcome {
  return assessRecordedReview({ completionDate: c.completionDate, baselinePai: c.baselinePai }, r, minObservationDays).outcome;
}

/** Whether the window of the milestone has ended by `today`. */
export function isDue(c: OutcomeCase, months: number, today: CalendarDate): boolean {
  return daysBetween(c.completionDate, today) >= milestoneDays(months) + windowDays(months);
}

/** The outcome at a milestone, or null when the case was not seen then (see the top of this file). */
export function outcomeAtMilestone(c: OutcomeCase, months: number, minObservationDays: number): ReviewOutcome | null {
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
  const terminal = c.reviews.find(isTerminal);
  if (terminal) return outcomeOf(c, terminal, minObservationDays);
  const late = c.reviews.filter((r) => daysOf(c, r) >= 365);
  return late.length ? outcomeOf(c, late[late.length - 1]!, minObservationDays) : null;
}

export const isStrictSuccess = (o: ReviewOutcome) => o === 'healed';
export const isLenientSuccess = (o: ReviewOutcome) => o === 'healed' || o === 'healing';

/**
 * Tooth-loss observations of a selection: each tooth once, from its earliest case in the
 * selection, followed across the cases that come after it (taken from `all`).
 */
export function toothLossObservations(selection: readonly OutcomeCase[], all: readonly OutcomeCase[], minObservationDays: number): Interval[] {
  const next = new Map<string, OutcomeCase>();
  for (const c of all) if (c.previousCaseId) next.set(c.previousCaseId, c);
  const selected = new Set(selection.map((c) => c.id));
  const out: Interval[] = [];
  for (const c of selection) {
    if (c.previousCaseId && selected.has(c.previousCaseId)) continue;
    const reviews: RecordedReview[] = [...c.reviews];
    const seen = new Set([c.id]);
    for (let n = next.get(c.id); n && !seen.has(n.id); n = next.get(n.id)) {
      seen.add(n.id);
      reviews.push(...n.reviews.filter((r) => r.reviewDate >= c.completionDate));
    }
    reviews.sort((a, b) => (a.reviewDate < b.reviewDate ? -1 : a.reviewDate > b.reviewDate ? 1 : 0));
    out.push(caseObservations(recordedHistory({ completionDate: c.completionDate, baselinePai: c.baselinePai }, reviews), { minObservationDays }).toothLoss);
  }
  return out;
}

/** Healing-endpoint observations of a selection (one per case). */
export function healingObservations(selection: readonly OutcomeCase[], minObservationDays: number): Interval[] {
  return selection.map(
    (c) => caseObservations(recordedHistory({ completionDate: c.completionDate, baselinePai: c.baselinePai }, c.reviews), { minObservationDays }).healing,
  );
}

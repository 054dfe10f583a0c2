/**
 * The non-healing worklist (issue 12, item 7): which cases a clinician should look at again, in
 * what order, and where a "watch and re-review" puts its recall visit. Pure: no database
 * (lib/services/outcomes-worklist.ts reads the rows and records the decisions).
 *
 * **The rule.** A completed case is on the worklist when its current outcome (lib/scoring
 * `currentOutcome` of its reviews, each scored by `assessRecordedReview` with the practice's minimum
 * observation time) is
 * - **disease**; or
 * - **healing** or **uncertain**, and today is more than four years (`HEALING_WINDOW_DAYS`, 1461
 *   days; day 1461 is still inside, day 1462 is past) after completion: the European Society of
 *   Endodontology's quality guidelines (2006, Int Endod J 39:921–930) judge the outcome at one year
 *   and follow a lesion that is unchanged or only smaller for up to four years; a lesion still
 *   present after four years is associated with post-treatment disease. A case that was still
 *   healing (or too early to judge) at its latest review and has not been seen since is therefore
 *   due a decision once four years have passed.
 * Left out: a case whose reviews found a terminal event (extraction, retreatment, apical surgery
 * — the case is over), a case whose tooth already has a later case that is completed (it was
 * treated again), healed cases, and cases without a review.
 *
 * **Urgency** (the list's order):
 * 1. *to decide*: no next step recorded, or the last one was recorded before the latest review
 *    (that review may change it) — symptomatic disease (a clinical sign at the latest review),
 *    then disease, then healing/uncertain past four years; the oldest latest review first;
 * 2. *overdue*: a watch-and-re-review or an extraction whose date has passed;
 * 3. *in hand*: every other recorded step (retreatment or surgery under way in its linked case, a
 *    referral, a date still ahead), the nearest date first.
 * Lamina lists cases by these rules; the decision is the clinician's (WORKLIST_CAUTION).
 */
import { addDaysTo, addMonthsClamped, compareDates, daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import { HEALING_WINDOW_DAYS, type RecordedReview, type ReviewOutcome } from '@/lib/scoring';
import { OPEN_VISIT_STATUSES, type VisitStatus } from '@/lib/recall/status';
import { MAX_MILESTONE_MONTHS } from '@/lib/schemas/recall-policy';
import { SCORED_REVIEW_SIGNS } from '@/lib/schemas/review';
import { currentOutcomeOf, type OutcomeCase } from './cases';

export const WORKLIST_CAUTION =
  'The next step is the clinician’s decision. Lamina lists cases by its scoring rules from the findings as entered; it does not diagnose.';

export const NEXT_STEPS = ['watch', 'retreat', 'surgery', 'extract', 'refer'] as const;
export type NextStep = (typeof NEXT_STEPS)[number];

export const NEXT_STEP_LABELS: Readonly<Record<NextStep, string>> = {
  watch: 'Watch and re-review',
  retreat: 'Retreat',
  surgery: 'Apical surgery',
  extract: 'Extract',
  refer: 'Refer',
};

/** What the step's date means. */
export const NEXT_STEP_DATE_LABELS: Readonly<Record<NextStep, string>> = {
  watch: 'Re-review on',
  retreat: 'Planned for',
  surgery: 'Planned for',
  extract: 'Planned for',
  refer: 'Referred on',
};

/** The steps that become a new case of the tooth, and that case's kind. */
export const CASE_KIND_OF_STEP: Readonly<Partial<Record<NextStep, 'nonsurgical_retreatment' | 'apical_surgery'>>> = {
  retreat: 'nonsurgical_retreatment',
  surgery: 'apical_surgery',
};

export type WorklistReason = 'disease' | 'healing_past_four_years' | 'uncertain_past_four_years';

export const WORKLIST_REASON_LABELS: Readonly<Record<WorklistReason, string>> = {
  disease: 'Disease at the latest review',
  healing_past_four_years: 'Healing at the latest review, now past four years',
  uncertain_past_four_years: 'Uncertain at the latest review, now past four years',
};

/** A case on the worklist, by the rule alone (before decisions). */
export interface WorklistEntry {
  caseId: string;
  operatorId: string;
  reason: WorklistReason;
  /** The case's current outcome (disease, healing or uncertain). */
  outcome: ReviewOutcome;
  latestReviewDate: CalendarDate;
  /** A clinical sign was recorded at the latest review. */
  symptomatic: boolean;
  /** Days from completion to today. */
  daysSinceCompletion: number;
  /** No recall visit of the case is open (planned, invited, confirmed or missed and not closed): nobody is inviting the patient back. */
  noOpenVisit: boolean;
}

/** Whether the case is on the worklist today, and why (null when it is not). `completedFollowers` are the ids of cases whose tooth has a later, completed case. */
export function worklistEntry(c: OutcomeCase, today: CalendarDate, minObservationDays: number, completedFollowers: ReadonlySet<string> = new Set()): WorklistEntry | null {
  if (c.reviews.length === 0 || completedFollowers.has(c.id)) return null;
  const outcome = currentOutcomeOf(c, minObservationDays);
  const days = daysBetween(c.completionDate, today);
  let reason: WorklistReason | null = null;
  if (outcome === 'disease') reason = 'disease';
  else if (outcome === 'healing' && days > HEALING_WINDOW_DAYS) reason = 'healing_past_four_years';
  else if (outcome === 'uncertain' && days > HEALING_WINDOW_DAYS) reason = 'uncertain_past_four_years';
  if (!reason || !outcome) return null;
  const latestDate = c.reviews.reduce((d, r) => (r.reviewDate > d ? r.reviewDate : d), c.reviews[0]!.reviewDate);
  const latest = c.reviews.filter((r) => r.reviewDate === latestDate);
  return {
    caseId: c.id,
    operatorId: c.operatorId,
    reason,
    outcome,
    latestReviewDate: latestDate,
    symptomatic: latest.some((r: RecordedReview) => SCORED_REVIEW_SIGNS.some((s) => r.signs?.[s])),
    daysSinceCompletion: days,
    noOpenVisit: !c.openVisit,
  };
}

/** The ids of cases whose tooth has a later case that is completed (from the practice's completed cases). */
export function completedFollowerIds(all: readonly OutcomeCase[]): Set<string> {
  return new Set(all.filter((c) => c.previousCaseId).map((c) => c.previousCaseId!));
}

/** The worklist of a selection by the rule alone, in the selection's order (see `orderWorklist`). */
export function worklistEntries(selection: readonly OutcomeCase[], all: readonly OutcomeCase[], today: CalendarDate, minObservationDays: number): WorklistEntry[] {
  const followed = completedFollowerIds(all);
  const out: WorklistEntry[] = [];
  for (const c of selection) {
    const e = worklistEntry(c, today, minObservationDays, followed);
    if (e) out.push(e);
  }
  return out;
}

/** Years (one decimal) from a number of days, 365.25 days a year. */
export const yearsOf = (days: number) => Math.round((days / 365.25) * 10) / 10;

/** The current next step of a case as the list needs it. */
export interface CurrentDecision {
  step: NextStep;
  date: CalendarDate;
  /** The practice-local day it was recorded. */
  decidedOn: CalendarDate;
}

export type Urgency = 'decide' | 'overdue' | 'in_hand';

export const URGENCY_LABELS: Readonly<Record<Urgency, string>> = {
  decide: 'To decide',
  overdue: 'Overdue',
  in_hand: 'In hand',
};

/** Whether a recorded step still stands: recorded on or after the day of the latest review. */
export function decisionStands(d: CurrentDecision | null, latestReviewDate: CalendarDate): d is CurrentDecision {
  return d !== null && d.decidedOn >= latestReviewDate;
}

export function urgencyOf(e: Pick<WorklistEntry, 'latestReviewDate'>, d: CurrentDecision | null, today: CalendarDate): Urgency {
  if (!decisionStands(d, e.latestReviewDate)) return 'decide';
  if ((d.step === 'watch' || d.step === 'extract') && d.date < today) return 'overdue';
  return 'in_hand';
}

const REASON_RANK = (e: WorklistEntry) => (e.reason === 'disease' ? (e.symptomatic ? 0 : 1) : 2);
const URGENCY_RANK: Record<Urgency, number> = { decide: 0, overdue: 1, in_hand: 2 };

/** Sorts entries by urgency (see the top of this file); `decisionOf` gives each case's current step. */
export function orderWorklist<E extends WorklistEntry>(entries: readonly E[], decisionOf: (caseId: string) => CurrentDecision | null, today: CalendarDate): (E & { urgency: Urgency })[] {
  const withU = entries.map((e) => ({ ...e, urgency: urgencyOf(e, decisionOf(e.caseId), today) }));
  return withU.sort((a, b) => {
    const u = URGENCY_RANK[a.urgency] - URGENCY_RANK[b.urgency];
    if (u) return u;
    if (a.urgency === 'decide') {
      return REASON_RANK(a) - REASON_RANK(b) || compareDates(a.latestReviewDate, b.latestReviewDate) || (a.caseId < b.caseId ? -1 : a.caseId > b.caseId ? 1 : 0);
    }
    const da = decisionOf(a.caseId)!.date;
    const db = decisionOf(b.caseId)!.date;
    return compareDates(da, db) || REASON_RANK(a) - REASON_RANK(b) || (a.caseId < b.caseId ? -1 : a.caseId > b.caseId ? 1 : 0);
  });
}

// --- the re-review visit ---------------------------------------------------------------------------

export interface VisitForPlan {
  milestone: number;
  dueDate: CalendarDate;
  windowStart: CalendarDate;
  windowEnd: CalendarDate;
  status: VisitStatus;
}

export type ReReviewPlan =
  | { create: true; milestone: number; dueDate: CalendarDate; windowStart: CalendarDate; windowEnd: CalendarDate }
  | { create: false; reason: 'open_visit' | 'beyond_plan' | 'no_room'; message: string };

/** The furthest milestone a recall plan may have. */
export const MAX_REREVIEW_MONTHS = MAX_MILESTONE_MONTHS;

/**
 * Where a "watch and re-review on `date`" puts its recall visit, under the visit rules
 * (lib/recall/plan.ts, lib/schemas/recall-policy.ts): one visit per milestone (months after
 * completion), windows of a case's visits never overlap, at most 120 months.
 * - The case already has an open visit (planned, invited, confirmed): none is added — the desk
 *   books that one for the date (two open visits would invite the patient twice).
 * - Otherwise a planned visit: milestone = whole months from completion to the date (the next free
 *   one when taken), due on the date, window = the policy's default width for that milestone
 *   (`defaultWindow`, passed in) cut so it does not overlap another visit's window.
 */
export function planReReviewVisit(
  visits: readonly VisitForPlan[],
  completionDate: CalendarDate,
  date: CalendarDate,
  windowOf: (months: number) => { windowBeforeDays: number; windowAfterDays: number },
): ReReviewPlan {
  const open = visits.find((v) => (OPEN_VISIT_STATUSES as readonly string[]).includes(v.status));
  if (open) return { create: false, reason: 'open_visit', message: `The case already has an open recall visit due ${open.dueDate}: the desk books it for the re-review date.` };
  let months = 0;
  while (compareDates(addMonthsClamped(completionDate, months + 1), date) <= 0) months++;
  const taken = new Set(visits.map((v) => v.milestone));
  let milestone = Math.max(1, months);
  while (taken.has(milestone)) milestone++;
  if (milestone > MAX_REREVIEW_MONTHS) return { create: false, reason: 'beyond_plan', message: 'The date is more than ten years after completion, beyond any recall plan: no visit was added.' };
  const w = windowOf(milestone);
  let windowStart = addDaysTo(date, -w.windowBeforeDays);
  let windowEnd = addDaysTo(date, w.windowAfterDays);
  for (const v of visits) {
    if (compareDates(v.windowEnd, date) < 0 && compareDates(v.windowEnd, windowStart) >= 0) windowStart = addDaysTo(v.windowEnd, 1);
    if (compareDates(v.windowStart, date) > 0 && compareDates(v.windowStart, windowEnd) <= 0) windowEnd = addDaysTo(v.windowStart, -1);
    if (compareDates(v.windowStart, date) <= 0 && compareDates(date, v.windowEnd) <= 0) {
      return { create: false, reason: 'no_room', message: `The date falls in the window of the case’s ${v.milestone}-month visit: no second visit was added.` };
    }
  }
  return { create: true, milestone, dueDate: date, windowStart, windowEnd };
}

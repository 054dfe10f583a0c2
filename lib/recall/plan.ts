/**
 * Recall plans: the follow-up visits a completed case gets from the practice's recall policy,
 * how they move when the completion date changes, and which are past due.
 *
 * - Due date = completion date + milestone months, clamped at the month end (2025-08-31 + 6 months
 *   = 2026-02-28; in a leap year 2023-08-31 + 6 = 2024-02-29). Every milestone counts from the
 *   completion date, not from the previous visit, so clamping never accumulates.
 * - Window = due date − windowBeforeDays … due date + windowAfterDays (both ends inclusive).
 * - Dates are 'YYYY-MM-DD' calendar dates (see lib/registry/calendar-date.ts for how drift is avoided).
 * - Past due: a visit is past due when its window has ended (windowEnd < today). An open visit
 *   (planned / invited / confirmed) that is past due becomes `missed` — the same rule for the nightly
 *   desk job and for imported past cases, whose old visits are created straight away as missed.
 *   A visit whose due date has passed but whose window is still open stays planned: it can still
 *   be kept, and the desk should invite it.
 */
import { addDaysTo, addMonthsClamped, compareDates, daysBetween, type CalendarDate } from '@/lib/registry/calendar-date';
import { DEFAULT_RECALL_POLICY, type RecallMilestone, type RecallPolicy } from '@/lib/schemas/recall-policy';
import { isOpenStatus, type VisitStatus } from './status';

export interface VisitDates {
  dueDate: CalendarDate;
  windowStart: CalendarDate;
  windowEnd: CalendarDate;
}

export interface PlannedVisit extends VisitDates {
  /** Months after the completion date. */
  milestone: number;
}

/** A visit as stored, enough to replan it. */
export interface ExistingVisit<Id = string> extends PlannedVisit {
  id: Id;
  status: VisitStatus;
}

/** The dates of one milestone for a case completed on `completionDate`. */
export function visitDatesFor(completionDate: CalendarDate, milestone: RecallMilestone): VisitDates {
  const dueDate = addMonthsClamped(completionDate, milestone.months);
  return {
    dueDate,
    windowStart: addDaysTo(dueDate, -milestone.windowBeforeDays),
    windowEnd: addDaysTo(dueDate, milestone.windowAfterDays),
  };
}

/** The visits a case completed on `completionDate` gets, in milestone order. */
export function planVisits(completionDate: CalendarDate, policy: RecallPolicy = DEFAULT_RECALL_POLICY): PlannedVisit[] {
  return [...policy.milestones]
    .sort((a, b) => a.months - b.months)
    .map((m) => ({ milestone: m.months, ...visitDatesFor(completionDate, m) }));
}

export interface VisitMove<Id = string> {
  id: Id;
  milestone: number;
  status: VisitStatus;
  from: VisitDates;
  to: VisitDates;
  /** The patient was invited or booked for the old date: tell the desk to invite again. */
  reinvite: boolean;
}

/** Why a visit keeps its dates: it was attended (never moved), it has ended otherwise, or its dates are already right. */
export type KeepReason = 'attended' | 'ended' | 'unchanged';

export interface VisitKeep<Id = string> {
  id: Id;
  milestone: number;
  status: VisitStatus;
  reason: KeepReason;
}

export interface ReplanResult<Id = string> {
  /** Milestones of the policy that have no visit yet: create these as planned. */
  add: PlannedVisit[];
  /** Open visits (planned, invited, confirmed) whose dates change. */
  move: VisitMove<Id>[];
  /** Everything else, with the reason. */
  keep: VisitKeep<Id>[];
}

/**
 * What a new completion date does to a case's visits.
 *
 * - Open visits (planned, invited, confirmed) get the dates of their milestone from the new date.
 *   Their window width comes from the policy; a visit whose milestone is no longer in the policy
 *   keeps its own width. Invited or confirmed visits that move are flagged `reinvite`.
 * - Attended visits never move. Missed, declined, cancelled and closed visits keep their dates
 *   too: they record what happened in the window the practice used at the time.
 * - A policy milestone without any visit is added; no visit is ever deleted here (a policy that
 *   dropped a milestone does not erase a patient's plan — cancelling is the desk's decision).
 */
export function replan<Id>(
  existingVisits: readonly ExistingVisit<Id>[],
  newCompletionDate: CalendarDate,
  policy: RecallPolicy = DEFAULT_RECALL_POLICY,
): ReplanResult<Id> {
  const byMonths = new Map(policy.milestones.map((m) => [m.months, m]));
  const result: ReplanResult<Id> = { add: [], move: [], keep: [] };
  const covered = new Set<number>();

  for (const visit of existingVisits) {
    covered.add(visit.milestone);
    if (!isOpenStatus(visit.status)) {
      result.keep.push({ id: visit.id, milestone: visit.milestone, status: visit.status, reason: visit.status === 'attended' ? 'attended' : 'ended' });
      continue;
    }
    const milestone: RecallMilestone = byMonths.get(visit.milestone) ?? {
      months: visit.milestone,
      windowBeforeDays: daysBetween(visit.windowStart, visit.dueDate),
      windowAfterDays: daysBetween(visit.dueDate, visit.windowEnd),
    };
    const to = visitDatesFor(newCompletionDate, milestone);
    const from: VisitDates = { dueDate: visit.dueDate, windowStart: visit.windowStart, windowEnd: visit.windowEnd };
    if (from.dueDate === to.dueDate && from.windowStart === to.windowStart && from.windowEnd === to.windowEnd) {
      result.keep.push({ id: visit.id, milestone: visit.milestone, status: visit.status, reason: 'unchanged' });
    } else {
      result.move.push({
        id: visit.id,
        milestone: visit.milestone,
        status: visit.status,
        from,
        to,
        reinvite: visit.status !== 'planned' && from.dueDate !== to.dueDate,
      });
    }
  }
  for (const planned of planVisits(newCompletionDate, policy)) {
    if (!covered.has(planned.milestone)) result.add.push(planned);
  }
  return result;
}

/** True when the visit's window has ended before `today`. */
export function isPastDue(visit: Pick<VisitDates, 'windowEnd'>, today: CalendarDate): boolean {
  return compareDates(visit.windowEnd, today) < 0;
}

/** True when `today` lies inside the visit's window (both ends inclusive). */
export function isInWindow(visit: Pick<VisitDates, 'windowStart' | 'windowEnd'>, today: CalendarDate): boolean {
  return compareDates(visit.windowStart, today) <= 0 && compareDates(today, visit.windowEnd) <= 0;
}

export interface StatusChange<Id = string> {
  id: Id;
  from: VisitStatus;
  to: VisitStatus;
}

/** The open visits whose window has ended by `today`, each to be marked missed. */
export function markPastDue<Id>(visits: readonly ExistingVisit<Id>[], today: CalendarDate): StatusChange<Id>[] {
  return visits
    .filter((v) => isOpenStatus(v.status) && isPastDue(v, today))
    .map((v) => ({ id: v.id, from: v.status, to: 'missed' as const }));
}

export interface ImportedVisit extends PlannedVisit {
  status: Extract<VisitStatus, 'planned' | 'missed'>;
}

/**
 * The plan of a past case entered by import on `today`: every milestone is created, those whose
 * window has already ended as `missed` (no attendance on record in Lamina — if the patient did come,
 * recording the review later moves it missed → attended), the rest as `planned`.
 */
export function planImportedVisits(
  completionDate: CalendarDate,
  policy: RecallPolicy,
  today: CalendarDate,
): ImportedVisit[] {
  return planVisits(completionDate, policy).map((v) => ({ ...v, status: isPastDue(v, today) ? 'missed' : 'planned' }));
}

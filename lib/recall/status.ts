/**
 * Recall visit statuses and the one table of allowed moves between them.
 *
 *   planned   — created from the recall policy; nobody has contacted the patient yet.
 *   invited   — an invitation went out (e-mail, phone call or letter).
 *   confirmed — the patient has an appointment for it.
 *   attended  — the patient came; a review belongs to this visit. Final.
 *   missed    — the window passed without an attendance on record (no-show, or no reply).
 *   declined  — the patient said no to this visit.
 *   cancelled — the visit is no longer needed (tooth extracted or re-treated, plan replaced). Final.
 *   closed    — closed as lost to follow-up: the practice stops trying. Final.
 *
 * "Open" visits (planned, invited, confirmed) are still to happen: they are the ones a new
 * completion date moves and the desk works on. The others record what happened.
 */

export const VISIT_STATUSES = ['planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed'] as const;
export type VisitStatus = (typeof VISIT_STATUSES)[number];

export const VISIT_STATUS_LABELS: Record<VisitStatus, string> = {
  planned: 'Planned',
  invited: 'Invited',
  confirmed: 'Confirmed',
  attended: 'Attended',
  missed: 'Missed',
  declined: 'Declined',
  cancelled: 'Cancelled',
  closed: 'Closed — lost to follow-up',
};

// --- the lists every queue, filter and job takes (build SQL from these with `statusSql`) ----------

/** Still to happen: planned, invited, confirmed. A new completion date moves these; past due they become missed. */
export const OPEN_VISIT_STATUSES: readonly VisitStatus[] = ['planned', 'invited', 'confirmed'];
/** Still need contact (reminders, "send now", propose a time): not yet invited, or invited without an answer. */
export const CONTACT_STATUSES: readonly VisitStatus[] = ['planned', 'invited'];
/** Invited and waiting for the patient's answer. */
export const AWAITING_REPLY_STATUSES: readonly VisitStatus[] = ['invited'];
/** The window ended without an attendance (not yet closed as lost). */
export const MISSED_STATUSES: readonly VisitStatus[] = ['missed'];
/** A sent reminder moves these to `invited` (the worker's finish statement); others keep their status. */
export const INVITED_BY_MESSAGE_STATUSES: readonly VisitStatus[] = ['planned'];

/**
 * Allowed moves, from → to. Reasons for the less obvious ones:
 * - planned → confirmed / attended: booked by phone without an invitation, or reviewed while in for other care.
 * - confirmed → invited: the appointment was called off and a new invitation sent.
 * - missed → invited / confirmed / attended: offered again, or came late, or the attendance was recorded late
 *   (visits of imported cases are marked missed when their window has passed — see plan.ts).
 * - declined → invited / confirmed: the patient changed their mind.
 * - attended, cancelled and closed are final; a lost patient who comes back gets an unplanned review.
 * - Undoing a "mark missed" the same day (undoMissed) is not a move: it restores what was there.
 */

export const VISIT_TRANSITIONS: Readonly<Record<VisitStatus, readonly VisitStatus[]>> = {
  planned: ['invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed'],
  invited: ['confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed'],
  confirmed: ['invited', 'attended', 'missed', 'declined', 'cancelled', 'closed'],
  missed: ['invited', 'confirmed', 'attended', 'cancelled', 'closed'],
  declined: ['invited', 'confirmed', 'cancelled', 'closed'],
  attended: [],
  cancelled: [],
  closed: [],
};

/** No move leaves them: attended, cancelled, closed. */
export const FINAL_VISIT_STATUSES: readonly VisitStatus[] = VISIT_STATUSES.filter((s) => VISIT_TRANSITIONS[s].length === 0);
/** Everything not final: the desk's "replied" and "delivery failed" queues. */
export const NOT_FINAL_VISIT_STATUSES: readonly VisitStatus[] = VISIT_STATUSES.filter((s) => VISIT_TRANSITIONS[s].length > 0);

/**
 * A list of statuses as an SQL list literal, `('planned', 'invited')`, for raw SQL that filters
 * by one of the lists above. Only the eight known words pass (they are constants, never input).
 */
export function statusSql(statuses: readonly VisitStatus[]): string {
  if (!statuses.length) throw new Error('statusSql: an empty list.');
  for (const s of statuses) if (!isVisitStatus(s)) throw new Error(`statusSql: ${String(s)} is no visit status.`);
  return `(${statuses.map((s) => `'${s}'`).join(', ')})`;
}

export function isVisitStatus(value: unknown): value is VisitStatus {
  return typeof value === 'string' && (VISIT_STATUSES as readonly string[]).includes(value);
}

/** True when a visit may move from `from` to `to`. Staying in the same status is not a move. */
export function canTransition(from: VisitStatus, to: VisitStatus): boolean {
  return VISIT_TRANSITIONS[from].includes(to);
}

/** Still to happen: planned, invited or confirmed. */
export function isOpenStatus(status: VisitStatus): boolean {
  return OPEN_VISIT_STATUSES.includes(status);
}

/** No move leaves it: attended, cancelled, closed. */
export function isFinalStatus(status: VisitStatus): boolean {
  return VISIT_TRANSITIONS[status].length === 0;
}

/** Still need contact (reminders): planned or invited. */
export function needsContact(status: VisitStatus): boolean {
  return CONTACT_STATUSES.includes(status);
}

// --- missed, and why ----------------------------------------------------------------------------------

/** Why a person marks a visit missed. The recall scan's own reason is `window_ended`. */
export const MISSED_REASONS = ['no_show', 'cancelled_late', 'unreachable'] as const;
export type MissedReason = (typeof MISSED_REASONS)[number];
export const MISSED_REASON_VALUES = [...MISSED_REASONS, 'window_ended'] as const;
export type MissedReasonValue = (typeof MISSED_REASON_VALUES)[number];
export const MISSED_REASON_LABELS: Record<MissedReasonValue, string> = {
  no_show: 'No-show',
  cancelled_late: 'Cancelled late',
  unreachable: 'Unreachable',
  window_ended: 'Window ended without an attendance',
};

// --- the one transition function ------------------------------------------------------------------

/** What the transition rules need to know about a visit. */
export interface TransitionVisit {
  status: VisitStatus;
  milestone?: number;
  windowStart: string;
  windowEnd: string;
  /** The appointment date, when booked. */
  bookedDate?: string | null;
  missedReason?: MissedReasonValue | null;
  missedOn?: string | null;
  missedFrom?: VisitStatus | null;
}

export interface TransitionRequest {
  to: VisitStatus;
  /** The practice's today, or the day the attendance happened (a review's date). */
  on: string;
  /** Who asks: a person at the practice, the patient (reply link) or the system (scan, worker). */
  by: 'user' | 'patient' | 'system';
  /** Required when a person marks a visit missed. */
  missedReason?: MissedReasonValue | null;
}

/** The columns a status change writes (besides who and when). */
export interface VisitStatusChanges {
  status: VisitStatus;
  reinviteNeeded?: false;
  missedReason: MissedReasonValue | null;
  missedOn: string | null;
  missedFrom: VisitStatus | null;
}

export type TransitionRefusal = 'not_allowed' | 'not_started' | 'reason_required' | 'undo_not_possible';
export type TransitionResult = { ok: true; changes: VisitStatusChanges } | { ok: false; refusal: TransitionRefusal; message: string };

const lower = (s: VisitStatus) => VISIT_STATUS_LABELS[s].toLowerCase();

/** The first day a visit can have happened: its appointment date when booked, else its window's first day. */
export function visitStartsOn(visit: Pick<TransitionVisit, 'windowStart' | 'bookedDate'>): string {
  return visit.bookedDate ?? visit.windowStart;
}

/** True when the visit's appointment (or, unbooked, its window) has begun by `on`. */
export function hasStarted(visit: Pick<TransitionVisit, 'windowStart' | 'bookedDate'>, on: string): boolean {
  return visitStartsOn(visit) <= on;
}

/** Statuses that record that a visit happened, or did not: they need the visit to have begun. */
const NEEDS_START: readonly VisitStatus[] = ['attended', 'missed'];

/**
 * The one rule for every status change of a recall visit — the case page, the desk, the review
 * form, the patient's reply link, the recall scan and the reminder worker all go through it:
 *
 * - only along VISIT_TRANSITIONS (else `not_allowed`, naming the moves that are allowed);
 * - attended or missed only once the appointment (or, unbooked, the window) has begun
 *   (`not_started`): a visit booked for 15 January cannot be attended on 2 December;
 * - a person marking a visit missed gives a reason: no-show, cancelled late or unreachable
 *   (`reason_required`); the scan's reason is `window_ended`;
 * - invited or confirmed clears the "invite again" flag; leaving missed clears its reason.
 *
 * Returns the columns to write, or the refusal with a message for the person who asked.
 */
export function transitionVisit(visit: TransitionVisit, req: TransitionRequest): TransitionResult {
  const from = visit.status;
  const to = req.to;
  if (!canTransition(from, to)) {
    const allowed = VISIT_TRANSITIONS[from];
    return {
      ok: false,
      refusal: 'not_allowed',
      message:
        `A visit that is ${lower(from)} cannot become ${lower(to)}. ` +
        (allowed.length ? `From ${lower(from)} it can become: ${allowed.map(lower).join(', ')}.` : `${VISIT_STATUS_LABELS[from]} is final.`),
    };
  }
  if (NEEDS_START.includes(to) && !hasStarted(visit, req.on)) {
    const what = visit.milestone !== undefined ? `The ${visit.milestone}-month visit` : 'The visit';
    const when = visit.bookedDate ? `is booked for ${visit.bookedDate}` : `has its window from ${visit.windowStart}`;
    return {
      ok: false,
      refusal: 'not_started',
      message: `${what} ${when}: it cannot be marked ${lower(to)} before then.` + (to === 'attended' && visit.bookedDate ? ' If the patient came early, change the appointment date first.' : ''),
    };
  }
  let missed: Pick<VisitStatusChanges, 'missedReason' | 'missedOn' | 'missedFrom'> = { missedReason: null, missedOn: null, missedFrom: null };
  if (to === 'missed') {
    const reason = req.missedReason ?? null;
    if (req.by === 'user' ? !reason || !(MISSED_REASONS as readonly string[]).includes(reason) : !reason) {
      return { ok: false, refusal: 'reason_required', message: `Say why the visit was missed: ${MISSED_REASONS.map((r) => MISSED_REASON_LABELS[r].toLowerCase()).join(', ')}.` };
    }
    missed = { missedReason: reason, missedOn: req.on, missedFrom: req.by === 'user' ? from : null };
  }
  return { ok: true, changes: { status: to, ...(to === 'invited' || to === 'confirmed' ? { reinviteNeeded: false as const } : {}), ...missed } };
}

/**
 * The moves a person may make now (what a screen offers): the table's moves less attended and
 * missed before the appointment or window has begun. A missed reason is asked for separately.
 */
export function allowedMoves(visit: TransitionVisit, today: string): VisitStatus[] {
  return VISIT_TRANSITIONS[visit.status].filter((to) => transitionVisit(visit, { to, on: today, by: 'user', missedReason: 'no_show' }).ok);
}

/**
 * Undoes a "mark missed" made by a person on `today`: the visit returns to the status it had.
 * Not possible on a later day, nor for a visit the scan marked missed (its window had ended).
 */
export function undoMissed(visit: TransitionVisit, today: string): TransitionResult {
  if (visit.status !== 'missed') return { ok: false, refusal: 'undo_not_possible', message: `The visit is ${lower(visit.status)}, not missed: there is nothing to undo.` };
  if (!visit.missedFrom || !visit.missedOn) {
    return { ok: false, refusal: 'undo_not_possible', message: 'This visit was marked missed when its window ended, not by a person: there is nothing to undo.' };
  }
  if (visit.missedOn !== today) {
    return { ok: false, refusal: 'undo_not_possible', message: `“Missed” was recorded on ${visit.missedOn}: it can be undone only the same day. Change the status instead.` };
  }
  return { ok: true, changes: { status: visit.missedFrom, missedReason: null, missedOn: null, missedFrom: null } };
}

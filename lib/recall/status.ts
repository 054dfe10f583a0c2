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

export const OPEN_VISIT_STATUSES: readonly VisitStatus[] = ['planned', 'invited', 'confirmed'];

/**
 * Allowed moves, from → to. Reasons for the less obvious ones:
 * - planned → confirmed / attended: booked by phone without an invitation, or reviewed while in for other care.
 * - confirmed → invited: the appointment was called off and a new invitation sent.
 * - missed → invited / confirmed / attended: offered again, or came late, or the attendance was recorded late
 *   (visits of imported cases are marked missed when their window has passed — see plan.ts).
 * - declined → invited / confirmed: the patient changed their mind.
 * - attended, cancelled and closed are final; a lost patient who comes back gets an unplanned review.
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

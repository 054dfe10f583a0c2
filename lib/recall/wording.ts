/**
 * Which words a patient's message uses. Pure code: the day is passed in — the practice's day on
 * which the message was queued, so every attempt at sending one outbox row renders the same
 * message.
 *
 *   invitation_early           the invitation, sent well before its usual day (the desk's "send
 *                              now" months ahead): "your review is due in June 2027", never
 *                              "it is nearly time"
 *   invitation                 the invitation on or after its usual day, due date not passed:
 *                              "it is nearly time … due in March"
 *   invitation_overdue         the invitation of a visit whose due date has passed: "was due in
 *                              March … it is not too late"
 *   proposal                   the desk proposes a time by e-mail: "we have set aside a time"
 *                              (never "we have not heard from you", even minutes after the
 *                              invitation)
 *   second_invitation          "we wrote to you recently … we have not heard from you yet"
 *   second_invitation_overdue  the same, after the due date ("was due in")
 *   last_notice                "was due … this is the last reminder"
 */
import { addDaysTo, compareDates, type CalendarDate } from '@/lib/registry/calendar-date';
import type { ReminderPolicy } from '@/lib/schemas/reminder-policy';
import type { ReminderStep } from './reminders';

export const MESSAGE_WORDINGS = [
  'invitation_early',
  'invitation',
  'invitation_overdue',
  'proposal',
  'second_invitation',
  'second_invitation_overdue',
  'last_notice',
] as const;
export type MessageWording = (typeof MESSAGE_WORDINGS)[number];

/** The wording of a message for `step`, for a visit due on `dueDate`, queued on `day`. */
export function messageWording(step: ReminderStep, dueDate: CalendarDate, day: CalendarDate, policy: Pick<ReminderPolicy, 'invitationWeeksBefore'>): MessageWording {
  const overdue = compareDates(dueDate, day) < 0;
  switch (step) {
    case 'proposal':
      return 'proposal';
    case 'last_notice':
      return 'last_notice';
    case 'second_invitation':
      return overdue ? 'second_invitation_overdue' : 'second_invitation';
    case 'invitation':
      if (overdue) return 'invitation_overdue';
      // Due later than the usual invitation day would have allowed: written as an early note.
      return compareDates(dueDate, addDaysTo(day, 7 * policy.invitationWeeksBefore)) > 0 ? 'invitation_early' : 'invitation';
  }
}

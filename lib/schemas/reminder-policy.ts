/**
 * A practice's reminder policy: when the recall desk's e-mails go out for a follow-up visit, and
 * when an unanswered visit is given up as lost to follow-up. Shared by the settings form, the API,
 * the recall scan and the worker. The schedule itself is computed in lib/recall/reminders.ts.
 *
 *   invitation         `invitationWeeksBefore` weeks before the due date (default 3).
 *   second_invitation  `secondInvitationAfterDays` days after the first if the patient has not
 *                      replied (default 10). The same wait separates any two messages to one visit.
 *   last_notice        `lastNoticeDaysAfterDue` days after the due date (default 14).
 *   lost to follow-up  a missed visit closes after `lostAfterUnansweredAttempts` unanswered
 *                      attempts (default 3: the three messages above).
 *   quiet hours        optional: no message leaves between `start` and `end`, practice time.
 *
 * The defaults are Lamina's own choice, modelled on common practice in recall clinics (a first
 * invitation two to four weeks ahead leaves time to book; one reminder about ten days later; one
 * last notice a fortnight after the date; about three tries before giving up). Not a published
 * standard.
 */
import { z } from 'zod';

const whole = (label: string, unit: string, min: number, max: number) =>
  z
    .number({ error: `Enter ${label} as a whole number of ${unit}.` })
    .int(`Enter ${label} as a whole number of ${unit}.`)
    .min(min, `${label[0]!.toUpperCase()}${label.slice(1)} must be between ${min} and ${max} ${unit}.`)
    .max(max, `${label[0]!.toUpperCase()}${label.slice(1)} must be between ${min} and ${max} ${unit}.`);

/** A time of day 'HH:MM' on the 24-hour clock. */
export const TimeOfDay = z
  .string({ error: 'Enter a time as HH:MM, e.g. 20:00.' })
  .trim()
  .regex(/^([01]\d|2[0-3]):[0-5]\d$/, 'Enter a time as HH:MM on the 24-hour clock, e.g. 20:00.');

export const QuietHoursSchema = z
  .object({
    /** From this time no message is sent… */
    start: TimeOfDay,
    /** …until this time (the next morning when it is earlier than `start`). */
    end: TimeOfDay,
  })
  .refine((q) => q.start !== q.end, { message: 'Quiet hours must start and end at different times.', path: ['end'] });

export const REMINDER_POLICY_BOUNDS = {
  invitationWeeksBefore: { min: 1, max: 12 },
  secondInvitationAfterDays: { min: 3, max: 60 },
  lastNoticeDaysAfterDue: { min: 1, max: 90 },
  lostAfterUnansweredAttempts: { min: 1, max: 10 },
} as const;

const B = REMINDER_POLICY_BOUNDS;

export const ReminderPolicySchema = z
  .object({
    invitationWeeksBefore: whole('the first invitation', 'weeks before the due date', B.invitationWeeksBefore.min, B.invitationWeeksBefore.max).default(3),
    secondInvitationAfterDays: whole('the wait for a reply', 'days', B.secondInvitationAfterDays.min, B.secondInvitationAfterDays.max).default(10),
    lastNoticeDaysAfterDue: whole('the last notice', 'days after the due date', B.lastNoticeDaysAfterDue.min, B.lastNoticeDaysAfterDue.max).default(14),
    lostAfterUnansweredAttempts: whole('the unanswered attempts before closing', 'attempts', B.lostAfterUnansweredAttempts.min, B.lostAfterUnansweredAttempts.max).default(3),
    quietHours: QuietHoursSchema.optional(),
  })
  .superRefine((p, ctx) => {
    // The second invitation goes `secondInvitationAfterDays` after the first; it must come before
    // the last notice is due, or it would never be sent.
    const firstToLast = p.invitationWeeksBefore * 7 + p.lastNoticeDaysAfterDue;
    if (p.secondInvitationAfterDays >= firstToLast) {
      ctx.addIssue({
        code: 'custom',
        path: ['secondInvitationAfterDays'],
        message:
          `The second invitation (${p.secondInvitationAfterDays} days after the first) would not come before the last notice ` +
          `(${firstToLast} days after the first): wait fewer days, invite earlier or send the last notice later.`,
      });
    }
  });

/** The policy as the settings form or the API sends it (every field may be left out). */
export type ReminderPolicyInput = z.input<typeof ReminderPolicySchema>;
/** The policy with every default filled in: what the scan and the worker use. */
export type ReminderPolicy = z.output<typeof ReminderPolicySchema>;
export type QuietHours = z.output<typeof QuietHoursSchema>;

/** 3 weeks, 10 days, 14 days, 3 attempts, no quiet hours. */
export const DEFAULT_REMINDER_POLICY: ReminderPolicy = ReminderPolicySchema.parse({});

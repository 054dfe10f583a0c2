import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { REMINDER_STEPS } from '../lib/recall/reminders';
import { VISIT_STATUSES } from '../lib/recall/status';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { ReminderSchema } from './Reminder';
import { UserSchema } from './User';

/**
 * The contact log of a recall visit: every message sent (or given up), every patient reply,
 * every call the desk noted and every status change, oldest first. Append-only.
 *
 *   message_sent       the worker sent a reminder (`reminder`, `step`)
 *   delivery_failed    a reminder could not be delivered after its last attempt
 *   reply              the patient answered through the signed link (`answer`, `note`)
 *   call               the desk noted a call (`reached`: did they speak to the patient, `note`)
 *   appointment        the desk proposed a time (the next reminder carries it) or booked one by phone (`note`)
 *   status_change      the visit moved (`fromStatus` → `toStatus`), by the desk, the patient or the scan
 *   consent_withdrawn  the patient unsubscribed from recall e-mails
 *
 * `by` says who acted: a user of the practice (`user`), the patient, or Lamina itself (the worker).
 */
export const CONTACT_KINDS = ['message_sent', 'delivery_failed', 'reply', 'call', 'appointment', 'status_change', 'consent_withdrawn'] as const;
export type ContactKind = (typeof CONTACT_KINDS)[number];
export const CONTACT_BY = ['user', 'patient', 'system'] as const;
export type ContactBy = (typeof CONTACT_BY)[number];
export const REPLY_ANSWERS = ['confirmed', 'another_time', 'declined'] as const;
export type ReplyAnswer = (typeof REPLY_ANSWERS)[number];

export const ContactLogEntrySchema = defineEntity({
  name: 'ContactLogEntry',
  tableName: 'contact_log_entry',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    visit: p.manyToOne(RecallVisitSchema).ref().deleteRule('cascade'),
    at: p.datetime().onCreate(() => new Date()),
    kind: p.enum([...CONTACT_KINDS]),
    by: p.enum([...CONTACT_BY]),
    user: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    reminder: p.manyToOne(ReminderSchema).ref().nullable().deleteRule('set null'),
    step: p.enum([...REMINDER_STEPS]).nullable(),
    answer: p.enum([...REPLY_ANSWERS]).nullable(),
    /** For calls: whether the desk spoke to the patient (an unanswered call counts as an attempt). */
    reached: p.boolean().nullable(),
    fromStatus: p.enum([...VISIT_STATUSES]).nullable(),
    toStatus: p.enum([...VISIT_STATUSES]).nullable(),
    note: p.string().length(1000).nullable(),
  },
  indexes: [
    { name: 'contact_log_entry_visit_at_index', properties: ['visit', 'at'] },
    { name: 'contact_log_entry_practice_at_index', properties: ['practice', 'at'] },
  ],
});

export type ContactLogEntry = InferEntity<typeof ContactLogEntrySchema>;

import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { REMINDER_STEPS } from '../lib/recall/reminders';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { UserSchema } from './User';

/**
 * The outbox: one row per recall visit, round and reminder step (unique), written before the job is
 * queued, so the database — not Redis — is the record of what must be, is being and was sent.
 *
 *   queued   waiting for the worker (a job exists in Redis, or the next scan re-queues it)
 *   sending  a worker claimed it and may have handed it to SMTP: the outcome is not known yet
 *            (see jobs/send-reminder.ts for what happens to a claim whose worker died)
 *   sent     the SMTP relay accepted it (`messageId`, `sentAt`)
 *   failed   every attempt failed, or the relay refused it for good; the visit is flagged
 *   skipped  nothing was sent on purpose: no recall-contact consent, or the visit no longer
 *            needs contact (`lastError` says why)
 *
 * The Message-ID is deterministic per row (`reminderMessageId`), so every attempt sends the
 * same message and a message can be matched to its row at the relay.
 */
export const REMINDER_STATUSES = ['queued', 'sending', 'sent', 'failed', 'skipped'] as const;
export type ReminderStatus = (typeof REMINDER_STATUSES)[number];

export const ReminderSchema = defineEntity({
  name: 'Reminder',
  tableName: 'reminder',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    visit: p.manyToOne(RecallVisitSchema).ref().deleteRule('cascade'),
    step: p.enum([...REMINDER_STEPS]),
    /** The visit's reminder round when queued (a proposal starts a new one: lib/recall/reminders.ts). */
    round: p.smallint().default(0),
    /** Who asked: the scheduled scan, or a coordinator's "send now". */
    origin: p.enum(['scan', 'desk'] as const).default('scan'),
    requestedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    status: p.enum([...REMINDER_STATUSES]).default('queued'),
    /** SMTP attempts claimed so far. */
    attempts: p.smallint().default(0),
    lastError: p.string().length(500).nullable(),
    /** The Message-ID header it was sent with, once sent. */
    messageId: p.string().length(255).nullable(),
    /** The practice's calendar day on which the step was entered. */
    queuedOn: p.date(),
    queuedAt: p.datetime().onCreate(() => new Date()),
    /** While `sending`: until when the claiming worker is presumed alive. */
    claimExpiresAt: p.datetime().nullable(),
    sentAt: p.datetime().nullable(),
    /** The practice's calendar day it was sent on. */
    sentOn: p.date().nullable(),
    failedAt: p.datetime().nullable(),
    updatedAt: p.datetime().onCreate(() => new Date()).onUpdate(() => new Date()),
  },
  uniques: [{ name: 'reminder_visit_round_step_unique', properties: ['visit', 'round', 'step'] }],
  indexes: [
    // The scan's reconciliation reads the open rows (queued or sending) of every practice each hour.
    {
      name: 'reminder_open_index',
      expression: `create index "reminder_open_index" on "reminder" ("practice_id", "status") where "status" in ('queued', 'sending')`,
    },
  ],
});

export type Reminder = InferEntity<typeof ReminderSchema>;

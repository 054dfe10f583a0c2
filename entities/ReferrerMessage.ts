import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { PracticeSchema } from './Practice';
import { ReferrerSchema } from './Referrer';
import { TreatmentCaseSchema } from './TreatmentCase';
import { UserSchema } from './User';

/**
 * The outbox of mail to referring dentists (issue 13), the same shape and rules as the reminder
 * outbox (entities/Reminder.ts): one row per kind and subject (unique: the upload link's id, or
 * the review's id for an outcome letter), written before the job is queued; the worker claims it
 * with a compare-and-set and sends under a Message-ID derived from the row id
 * (jobs/send-referrer-mail.ts).
 *
 *   queued → sending → sent, or failed after the last attempt (the case page shows it).
 */
export const REFERRER_MESSAGE_KINDS = ['upload_link', 'outcome_letter'] as const;
export type ReferrerMessageKind = (typeof REFERRER_MESSAGE_KINDS)[number];
export const REFERRER_MESSAGE_STATUSES = ['queued', 'sending', 'sent', 'failed'] as const;
export type ReferrerMessageStatus = (typeof REFERRER_MESSAGE_STATUSES)[number];

export const ReferrerMessageSchema = defineEntity({
  name: 'ReferrerMessage',
  tableName: 'referrer_message',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    case: p.manyToOne(TreatmentCaseSchema).ref().deleteRule('cascade'),
    kind: p.enum([...REFERRER_MESSAGE_KINDS]),
    /** The upload link (upload_link) or the review (outcome_letter) the message is about. */
    subjectId: p.uuid(),
    referrer: p.manyToOne(ReferrerSchema).ref().nullable().deleteRule('set null').default(null),
    /** The referrer's address when the message was queued: every attempt goes to the same one. */
    toAddress: p.string().length(254),
    requestedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null').default(null),
    status: p.enum([...REFERRER_MESSAGE_STATUSES]).default('queued'),
    attempts: p.smallint().default(0),
    lastError: p.string().length(500).nullable().default(null),
    messageId: p.string().length(255).nullable().default(null),
    queuedAt: p.datetime().onCreate(() => new Date()),
    claimExpiresAt: p.datetime().nullable().default(null),
    sentAt: p.datetime().nullable().default(null),
    failedAt: p.datetime().nullable().default(null),
    updatedAt: p.datetime().onCreate(() => new Date()).onUpdate(() => new Date()),
  },
  uniques: [{ name: 'referrer_message_kind_subject_unique', properties: ['kind', 'subjectId'] }],
  indexes: [
    { name: 'referrer_message_case_index', properties: ['case'] },
    {
      name: 'referrer_message_open_index',
      expression: `create index "referrer_message_open_index" on "referrer_message" ("practice_id", "status") where "status" in ('queued', 'sending')`,
    },
  ],
});

export type ReferrerMessage = InferEntity<typeof ReferrerMessageSchema>;

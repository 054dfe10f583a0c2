import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { DEFAULT_RECALL_POLICY, type RecallPolicy } from '../lib/schemas/recall-policy';
import { DEFAULT_REMINDER_POLICY, type ReminderPolicy } from '../lib/schemas/reminder-policy';

/** A clinic. The registry holds several; every patient record belongs to exactly one. */
export const PracticeSchema = defineEntity({
  name: 'Practice',
  tableName: 'practice',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    name: p.string().length(160),
    /** Short unique handle used in URLs and logs, e.g. "harbour-endo". */
    slug: p.string().length(60).unique(),
    /** How teeth are shown on screens: FDI two-digit (ISO 3950) or Universal (1–32). */
    toothNotation: p.enum(['fdi', 'universal'] as const).default('fdi'),
    timeZone: p.string().length(60).default('Europe/London'),
    /**
     * Follow-up milestones and their windows (lib/schemas/recall-policy.ts), stored as parsed
     * (every window filled in); default 6, 12 and 24 months. Read it through RecallPolicySchema.
     */
    recallPolicy: p
      .json<RecallPolicy>()
      .onCreate(() => DEFAULT_RECALL_POLICY)
      .defaultRaw(`'${JSON.stringify(DEFAULT_RECALL_POLICY)}'`),
    /**
     * When the recall desk's e-mails go out and when an unanswered visit closes as lost to
     * follow-up (lib/schemas/reminder-policy.ts), stored as parsed; default 3 weeks / 10 days /
     * 14 days / 3 attempts. Read it through ReminderPolicySchema.
     */
    reminderPolicy: p
      .json<ReminderPolicy>()
      .onCreate(() => DEFAULT_REMINDER_POLICY)
      .defaultRaw(`'${JSON.stringify(DEFAULT_REMINDER_POLICY)}'`),
    /**
     * Minimum observation time in days (default 365, ESE 2006): before it a lesion unchanged from
     * baseline is "uncertain", from it on "disease" (lib/scoring assessReview).
     */
    minObservationDays: p.smallint().default(365),
    /** Share (%) of follow-up films read a second time, blinded, besides every "disease" (issue 13; default 20). */
    secondReadingPercent: p.smallint().default(20),
    /** Shown in every patient message and calendar file (practice settings); optional. */
    address: p.string().length(300).nullable(),
    phone: p.string().length(40).nullable(),
    /** The practice's e-mail for patients (not the sending address, MAIL_FROM). */
    contactEmail: p.string().length(254).nullable(),
    createdAt: p.datetime().onCreate(() => new Date()),
  },
});

export type Practice = InferEntity<typeof PracticeSchema>;

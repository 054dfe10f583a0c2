import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { MISSED_REASON_VALUES, VISIT_STATUSES } from '../lib/recall/status';
import { PracticeSchema } from './Practice';
import { TreatmentCaseSchema } from './TreatmentCase';
import { UserSchema } from './User';

/**
 * One follow-up visit of a completed case, created from the practice's recall policy
 * (lib/recall/plan.ts): milestone in months after completion, its due date and window (dates,
 * both ends inclusive). Status moves only through lib/recall/status.ts VISIT_TRANSITIONS.
 * 'closed' is "closed as lost to follow-up", with `lostToFollowUp` and `closedOn` recorded.
 */
export const RecallVisitSchema = defineEntity({
  name: 'RecallVisit',
  tableName: 'recall_visit',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    case: p.manyToOne(TreatmentCaseSchema).ref().deleteRule('cascade'),
    /** Months after the completion date. */
    milestone: p.smallint(),
    dueDate: p.date(),
    windowStart: p.date(),
    windowEnd: p.date(),
    status: p.enum([...VISIT_STATUSES]).default('planned'),
    /** The appointment date, once booked (confirmed). */
    bookedDate: p.date().nullable(),
    /** The visit moved after an invitation or booking (completion date changed): invite again. */
    reinviteNeeded: p.boolean().default(false),
    /** False: the recall scan sends no automatic reminder for it (a visit already due when the review import brought the practice's history in); the desk still can. */
    autoReminders: p.boolean().default(true),
    lostToFollowUp: p.boolean().default(false),
    closedOn: p.date().nullable(),
    note: p.string().length(500).nullable(),
    /** A proposed appointment time (recall desk); the next reminder carries it as a calendar file. */
    proposedStart: p.datetime().nullable(),
    /** The current round of reminder steps: raised by each time proposed by e-mail (lib/recall/reminders.ts). */
    reminderRound: p.smallint().default(0),
    /** A reminder could not be delivered after its last attempt: the coordinator should call. */
    deliveryFailedAt: p.datetime().nullable(),
    /** Why it was missed (lib/recall MISSED_REASONS, or the scan's window_ended); cleared when it leaves missed. */
    missedReason: p.enum([...MISSED_REASON_VALUES]).nullable(),
    /** The practice's day it was marked missed. */
    missedOn: p.date().nullable(),
    /** The status before a person marked it missed: "undo" the same day restores it (lib/recall undoMissed). */
    missedFrom: p.enum([...VISIT_STATUSES]).nullable(),
    statusChangedAt: p.datetime().onCreate(() => new Date()),
    statusChangedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    createdAt: p.datetime().onCreate(() => new Date()),
    updatedAt: p.datetime().onCreate(() => new Date()).onUpdate(() => new Date()),
    // Copies of the case's state for the recall desk, kept by database triggers (Migration20261203170000)
    // whoever writes: never set by the app. The case and its patient are not archived; the case's
    // clinician; its patient.
    caseLive: p.boolean().default(true),
    operatorId: p.uuid().nullable(),
    patientId: p.uuid().nullable(),
  },
  uniques: [{ name: 'recall_visit_case_milestone_unique', properties: ['case', 'milestone'] }],
  indexes: [
    // The case-list filter "has a visit in status S due between D1 and D2" runs either way round,
    // both index-only: from the visits (practice, status, due) to their cases, or from the cases
    // to their visits (case, status, due). The recall desk reads by practice and due date.
    { name: 'recall_visit_practice_status_due_index', properties: ['practice', 'status', 'dueDate', 'case'] },
    { name: 'recall_visit_case_status_due_index', properties: ['case', 'status', 'dueDate', 'practice'] },
    { name: 'recall_visit_practice_due_index', properties: ['practice', 'dueDate'] },
    // The recall desk's queues (lib/services/recall-desk.ts QUEUED_STATUSES: every status a queue
    // other than "this month" asks for), live visits only: index-only, with every column their
    // conditions read.
    {
      name: 'recall_visit_desk_index',
      expression:
        `create index "recall_visit_desk_index" on "recall_visit" ("practice_id", "status", "due_date") ` +
        `include ("id", "operator_id", "patient_id", "booked_date", "proposed_start", "window_end", "delivery_failed_at") ` +
        `where "status" in ('planned', 'invited', 'confirmed', 'missed', 'declined') and "case_live"`,
    },
    {
      name: 'recall_visit_delivery_failed_index',
      expression: `create index "recall_visit_delivery_failed_index" on "recall_visit" ("practice_id", "operator_id") where "delivery_failed_at" is not null and "case_live"`,
    },
  ],
});

export type RecallVisit = InferEntity<typeof RecallVisitSchema>;

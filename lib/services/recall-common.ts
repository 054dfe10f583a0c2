import 'server-only';
import { randomUUID } from 'node:crypto';
import { z } from 'zod';
import type { Knex } from '@mikro-orm/knex';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { ContactBy, ContactKind, ReplyAnswer } from '@/entities';
import type { ReminderPolicy, ReminderStep } from '@/lib/recall/reminders';
import { transitionVisit, type MissedReasonValue, type TransitionRequest, type TransitionResult, type VisitStatus, type VisitStatusChanges } from '@/lib/recall/status';
import type { ToothNotation } from '@/lib/teeth';
import { NotFoundError } from './errors';
import { EMAIL_CONSENT_SQL, reminderPolicyOf } from './recall-outbox';
import { isUuid } from '@/lib/uuid';
import { knexOf, practiceOfSession, todayIn } from './registry-common';

/** Pieces shared by the recall-desk services (desk, contact log, replies, rate, policy). */

export interface RecallSettings {
  practiceId: string;
  practiceName: string;
  timeZone: string;
  toothNotation: ToothNotation;
  reminderPolicy: ReminderPolicy;
  today: string;
}

export async function recallSettings(em: EntityManager, practiceId: string, now: Date = new Date()): Promise<RecallSettings> {
  const known = practiceOfSession(em, practiceId);
  const row = known
    ? { id: practiceId, name: known.name, time_zone: known.settings.timeZone, tooth_notation: known.settings.toothNotation, reminder_policy: known.reminderPolicy }
    : ((await knexOf(em)('practice').where({ id: practiceId }).first('id', 'name', 'time_zone', 'tooth_notation', 'reminder_policy')) as
        | { id: string; name: string; time_zone: string; tooth_notation: ToothNotation; reminder_policy: unknown }
        | undefined);
  if (!row) throw new NotFoundError('No such practice.');
  return {
    practiceId: row.id,
    practiceName: row.name,
    timeZone: row.time_zone,
    toothNotation: row.tooth_notation,
    reminderPolicy: reminderPolicyOf(row.reminder_policy),
    today: todayIn(row.time_zone, now),
  };
}

/**
 * The practice's visits (v) whose case and patient are not archived, with their patient (p) joined
 * when `withPatient`. Read from the visit's own copies of its case's state (case_live, operator_id,
 * patient_id: kept by database triggers, Migration20261203170000), so no case is joined: filter a
 * clinician's visits on `v.operator_id`.
 */
export function activeVisits(knex: Knex, practiceId: string, { withPatient = false } = {}): Knex.QueryBuilder {
  const b = knex('recall_visit as v').where('v.practice_id', practiceId).where('v.case_live', true);
  return withPatient ? b.join('patient as p', 'p.id', 'v.patient_id') : b;
}

/** A list of visit ids from a body: 1 to 200 uuids, duplicates dropped. */
export const VisitIds = z
  .array(z.string({ error: 'A visit id is a text.' }).trim().refine(isUuid, 'Not a visit id.'), { error: 'Send visitIds: a list of visit ids.' })
  .min(1, 'Choose at least one visit.')
  .max(200, 'At most 200 visits at once.')
  .transform((ids) => [...new Set(ids.map((id) => id.toLowerCase()))]);

export interface DeskVisit {
  id: string;
  case_id: string;
  milestone: number;
  status: VisitStatus;
  due_date: string;
  window_start: string;
  window_end: string;
  booked_date: string | null;
  proposed_start: string | null;
  delivery_failed_at: string | null;
  reminder_round: number;
  missed_reason: MissedReasonValue | null;
  missed_on: string | null;
  missed_from: VisitStatus | null;
  patient_id: string;
  given_name: string;
  family_name: string;
  consent: boolean;
}

/**
 * The visits of the actor's practice with these ids (locked for update inside a transaction
 * when `lock`), or a 404 naming none of them when any is unknown — nothing is changed then.
 */
export async function visitsOfPractice(em: EntityManager, practiceId: string, ids: readonly string[], lock = false): Promise<DeskVisit[]> {
  const knex = knexOf(em);
  const q = knex('recall_visit as v')
    .join('treatment_case as c', 'c.id', 'v.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .where('v.practice_id', practiceId)
    .whereIn('v.id', ids)
    .select(
      'v.id',
      'v.case_id',
      'v.milestone',
      'v.status',
      'v.due_date',
      'v.window_start',
      'v.window_end',
      'v.booked_date',
      'v.proposed_start',
      'v.delivery_failed_at',
      'v.reminder_round',
      'v.missed_reason',
      'v.missed_on',
      'v.missed_from',
      'p.id as patient_id',
      'p.given_name',
      'p.family_name',
      knex.raw(`${EMAIL_CONSENT_SQL} as consent`),
    );
  if (lock) q.forUpdate('v');
  const rows = (await q) as DeskVisit[];
  if (rows.length !== ids.length) {
    throw new NotFoundError(ids.length === 1 ? 'No such visit.' : 'Some of these visits do not exist in this practice. Nothing was changed.');
  }
  const order = new Map(ids.map((id, i) => [id, i]));
  return rows.sort((a, b) => order.get(a.id)! - order.get(b.id)!);
}

/** How a bulk action's result names its visit: "Ashdown, Wren — 12-month visit". */
export function visitLabel(v: Pick<DeskVisit, 'given_name' | 'family_name' | 'milestone'>): string {
  return `${v.family_name}, ${v.given_name} — ${v.milestone}-month visit`;
}

export interface LogInput {
  practiceId: string;
  visitId: string;
  kind: ContactKind;
  by: ContactBy;
  userId?: string | null;
  reminderId?: string | null;
  step?: ReminderStep | null;
  answer?: ReplyAnswer | null;
  reached?: boolean | null;
  fromStatus?: VisitStatus | null;
  toStatus?: VisitStatus | null;
  note?: string | null;
  at?: Date;
}

/** Appends contact-log entries (in the caller's transaction). */
export async function logContact(em: EntityManager | Knex, entries: readonly LogInput[]): Promise<void> {
  if (!entries.length) return;
  const knex = 'getKnex' in em ? knexOf(em as EntityManager) : (em as Knex);
  const now = Date.now();
  await knex('contact_log_entry').insert(
    entries.map((e, i) => ({
      id: randomUUID(),
      practice_id: e.practiceId,
      visit_id: e.visitId,
      // Entries written together keep their order (a reply, then the status change it caused).
      at: e.at ?? new Date(now + i),
      kind: e.kind,
      by: e.by,
      user_id: e.userId ?? null,
      reminder_id: e.reminderId ?? null,
      step: e.step ?? null,
      answer: e.answer ?? null,
      reached: e.reached ?? null,
      from_status: e.fromStatus ?? null,
      to_status: e.toStatus ?? null,
      note: e.note ? e.note.slice(0, 1000) : null,
    })),
  );
}

/** The recall_visit columns of a status change from lib/recall transitionVisit. */
export function visitStatusColumns(changes: VisitStatusChanges, userId: string | null, now: Date = new Date()): Record<string, unknown> {
  return {
    status: changes.status,
    status_changed_at: now,
    status_changed_by_id: userId,
    updated_at: now,
    missed_reason: changes.missedReason,
    missed_on: changes.missedOn,
    missed_from: changes.missedFrom,
    ...(changes.reinviteNeeded === false ? { reinvite_needed: false } : {}),
  };
}

/** The fields of a desk row (or any raw visit row) that lib/recall transitionVisit reads. */
export interface VisitStatusRow {
  id: string;
  status: VisitStatus;
  milestone?: number;
  window_start: string;
  window_end: string;
  booked_date?: string | null;
  missed_reason?: MissedReasonValue | null;
  missed_on?: string | null;
  missed_from?: VisitStatus | null;
}

/**
 * Moves a visit row through lib/recall transitionVisit with SQL, in the caller's transaction (the
 * row-locked side of the one rule; lib/services/visits.ts changeVisitStatus is the ORM side).
 * A refusal changes nothing and is returned for the caller to report; `extra` columns are written
 * with the change. The caller writes the contact-log entry.
 */
export async function setVisitStatus(
  em: EntityManager,
  visit: VisitStatusRow,
  req: TransitionRequest,
  userId: string | null,
  extra: Record<string, unknown> = {},
): Promise<TransitionResult> {
  const result = transitionVisit(
    {
      status: visit.status,
      milestone: visit.milestone,
      windowStart: visit.window_start,
      windowEnd: visit.window_end,
      bookedDate: visit.booked_date ?? null,
      missedReason: visit.missed_reason ?? null,
      missedOn: visit.missed_on ?? null,
      missedFrom: visit.missed_from ?? null,
    },
    req,
  );
  if (result.ok) {
    await knexOf(em)('recall_visit')
      .where({ id: visit.id })
      .update({ ...visitStatusColumns(result.changes, userId), ...extra });
  }
  return result;
}

export function iso(value: string | Date | null | undefined): string | null {
  if (value === null || value === undefined) return null;
  return (value instanceof Date ? value : new Date(value)).toISOString();
}

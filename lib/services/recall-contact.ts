import 'server-only';
import { z } from 'zod';
import { text } from '@/lib/registry/fields';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { ContactBy, ContactKind, ReminderStatus, ReplyAnswer } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { REMINDER_STEP_LABELS, VISIT_STATUS_LABELS, type ReminderStep, type VisitStatus } from '@/lib/recall';
import { audit } from './audit';
import { parseInput } from './parse';
import { iso, logContact, recallSettings, visitsOfPractice } from './recall-common';
import { deskRowsByIds, type DeskRow } from './recall-desk';
import { assertId, knexOf } from './registry-common';
import { afterDeskAction } from './desk-counts';

/** The contact log of one recall visit, and the call notes the desk adds to it. */

export interface ContactEntryView {
  id: string;
  at: string;
  kind: ContactKind;
  by: ContactBy;
  /** The practice user who acted (by = 'user'). */
  user: { id: string; name: string | null } | null;
  step: ReminderStep | null;
  stepLabel: string | null;
  answer: ReplyAnswer | null;
  reached: boolean | null;
  fromStatus: VisitStatus | null;
  toStatus: VisitStatus | null;
  note: string | null;
  /** For message_sent / delivery_failed: the outbox row as it is now. */
  reminder: { id: string; status: ReminderStatus; messageId: string | null; attempts: number; lastError: string | null } | null;
  /** One line for the screen, e.g. "Invitation sent", "Patient asked for another time", "Call — no answer". */
  summary: string;
}

export interface ContactLogView {
  visit: DeskRow;
  entries: ContactEntryView[];
}

const ANSWER_WORDS: Record<ReplyAnswer, string> = {
  confirmed: 'Patient confirmed',
  another_time: 'Patient asked for another time',
  declined: 'Patient declined further follow-up',
};

function summary(e: { kind: ContactKind; by: ContactBy; step: ReminderStep | null; answer: ReplyAnswer | null; reached: boolean | null; from_status: VisitStatus | null; to_status: VisitStatus | null }): string {
  const step = e.step ? REMINDER_STEP_LABELS[e.step] : 'Reminder';
  switch (e.kind) {
    case 'message_sent':
      return `${step} sent by e-mail`;
    case 'delivery_failed':
      return `${step} could not be delivered`;
    case 'reply':
      return e.answer ? ANSWER_WORDS[e.answer] : 'Patient replied';
    case 'call':
      return e.reached ? 'Call — spoke to the patient' : 'Call — no answer';
    case 'appointment':
      return 'Appointment';
    case 'status_change': {
      const label = (s: VisitStatus | null) => (s ? VISIT_STATUS_LABELS[s].toLowerCase() : '—');
      const who = e.by === 'patient' ? ' (patient’s answer)' : e.by === 'system' ? ' (Lamina)' : '';
      return `Status: ${label(e.from_status)} → ${label(e.to_status)}${who}`;
    }
    case 'consent_withdrawn':
      return 'Patient unsubscribed from recall e-mails';
  }
}

/** The visit (as a desk row) and its contact log, oldest first. Audited as a read of the patient's record. */
export async function listContactLog(em: EntityManager, actor: Actor, visitId: string): Promise<ContactLogView> {
  assertCan(actor, 'recall.manage');
  const id = assertId(visitId, 'visit');
  await visitsOfPractice(em, actor.practiceId, [id]);
  const s = await recallSettings(em, actor.practiceId);
  const knex = knexOf(em);
  const [[visit], rows] = await Promise.all([
    deskRowsByIds(em, s, [id]),
    knex('contact_log_entry as e')
      .leftJoin('app_user as u', 'u.id', 'e.user_id')
      .leftJoin('reminder as r', 'r.id', 'e.reminder_id')
      .where('e.visit_id', id)
      .orderBy([{ column: 'e.at', order: 'asc' }, { column: 'e.id', order: 'asc' }])
      .select(
        'e.id',
        'e.at',
        'e.kind',
        'e.by',
        'e.user_id',
        'u.name as user_name',
        'e.step',
        'e.answer',
        'e.reached',
        'e.from_status',
        'e.to_status',
        'e.note',
        'r.id as reminder_id',
        'r.status as reminder_status',
        'r.message_id',
        'r.attempts',
        'r.last_error',
      ) as Promise<Record<string, unknown>[]>,
  ]);
  await audit(em, actor, { action: 'recall.contact_log_read', entityType: 'visit', entityId: id });
  return {
    visit: visit!,
    entries: rows.map((r) => {
      const e = r as {
        kind: ContactKind;
        by: ContactBy;
        step: ReminderStep | null;
        answer: ReplyAnswer | null;
        reached: boolean | null;
        from_status: VisitStatus | null;
        to_status: VisitStatus | null;
      };
      return {
        id: r.id as string,
        at: iso(r.at as string)!,
        kind: e.kind,
        by: e.by,
        user: r.user_id ? { id: r.user_id as string, name: (r.user_name as string | null) ?? null } : null,
        step: e.step,
        stepLabel: e.step ? REMINDER_STEP_LABELS[e.step] : null,
        answer: e.answer,
        reached: e.reached,
        fromStatus: e.from_status,
        toStatus: e.to_status,
        note: (r.note as string | null) ?? null,
        reminder: r.reminder_id
          ? {
              id: r.reminder_id as string,
              status: r.reminder_status as ReminderStatus,
              messageId: (r.message_id as string | null) ?? null,
              attempts: Number(r.attempts),
              lastError: (r.last_error as string | null) ?? null,
            }
          : null,
        summary: summary(e),
      };
    }),
  };
}

export const CallNoteInput = z.object({
  note: text({ max: 1000, required: 'Write what was said (or that nobody answered).' }),
  /** Did the desk speak to the patient? A call not answered counts as an unanswered attempt (lost to follow-up). */
  reached: z.boolean({ error: 'Say whether you spoke to the patient.' }),
});

/** Adds a call note to a visit's contact log; it clears a delivery-failed flag. Returns the log. */
export const addCallNote = afterDeskAction(async (em: EntityManager, actor: Actor, visitId: string, raw: unknown): Promise<ContactLogView> => {
  assertCan(actor, 'recall.manage');
  const id = assertId(visitId, 'visit');
  const input = parseInput(CallNoteInput, raw);
  await em.transactional(async (tx) => {
    await visitsOfPractice(tx, actor.practiceId, [id], true);
    await logContact(tx, [{ practiceId: actor.practiceId, visitId: id, kind: 'call', by: 'user', userId: actor.userId, reached: input.reached, note: input.note }]);
    await knexOf(tx)('recall_visit').where({ id }).update({ delivery_failed_at: null, updated_at: new Date() });
  });
  await audit(em, actor, { action: 'recall.call_noted', entityType: 'visit', entityId: id, detail: { reached: input.reached } });
  return listContactLog(em, actor, id);
});

import 'server-only';
import { z } from 'zod';
import { text } from '@/lib/registry/fields';
import type { EntityManager } from '@mikro-orm/postgresql';
import { REPLY_ANSWERS, type ReplyAnswer } from '@/entities';
import { env } from '@/lib/env';
import type { Origin } from '@/lib/auth/origin';
import { isFinalStatus, isOpenStatus, type VisitStatus } from '@/lib/recall';
import {
  LINK_REFUSAL_MESSAGES,
  deriveLinkSecret,
  verifyReplyToken,
  verifyUnsubscribeToken,
  type LinkTokenPayload,
  type VerifyFailure,
} from '@/lib/recall/reply-token';
import { dueMonth } from '@/lib/mail/templates/ReminderEmail';
import { recallConsent } from '@/lib/schemas/patient';
import { audit } from './audit';
import { parseInput } from './parse';
import { logContact, setVisitStatus, type VisitStatusRow } from './recall-common';
import { knexOf, todayIn } from './registry-common';
import { refreshNextVisit } from './visits';

/**
 * Patients answer without an account, through the signed links of a reminder
 * (lib/recall/reply-token.ts): confirm, ask for another time (with a note), decline further
 * follow-up; and unsubscribe from recall e-mails.
 *
 * - Looking a link up changes nothing and writes nothing (mail scanners open links).
 * - A reply is single use: its nonce is inserted (primary key) in the same transaction that
 *   changes the visit; a second use finds it and changes nothing.
 * - An expired, used, tampered or otherwise invalid link is refused with a plain message and
 *   changes nothing. So is a reply to a visit that is already final.
 * - Unsubscribing withdraws the patient's recall-contact consent; doing it again is harmless.
 */

export type LinkRefusal = VerifyFailure | 'used' | 'closed' | 'unknown';

export const LINK_MESSAGES: Record<LinkRefusal, string> = {
  ...LINK_REFUSAL_MESSAGES,
  closed: 'This follow-up review is no longer open, so there is nothing to answer. If you have a question, please contact the practice.',
  unknown: 'This link is not valid any more. Please contact the practice.',
};

export type Refused = { ok: false; reason: LinkRefusal; message: string };
const refuse = (reason: LinkRefusal): Refused => ({ ok: false, reason, message: LINK_MESSAGES[reason] });

let secret: Buffer | undefined;
function linkSecret(): Buffer {
  secret ??= deriveLinkSecret(env.NEXTAUTH_SECRET);
  return secret;
}

interface LinkedVisit {
  id: string;
  practice_id: string;
  case_id: string;
  milestone: number;
  status: VisitStatus;
  due_date: string;
  window_start: string;
  window_end: string;
  booked_date: string | null;
  proposed_start: string | null;
  practice_name: string;
  time_zone: string;
  patient_id: string;
  recall_contact: boolean;
}

async function linkedVisit(em: EntityManager, visitId: string, lock = false): Promise<LinkedVisit | undefined> {
  const q = knexOf(em)('recall_visit as v')
    .join('treatment_case as c', 'c.id', 'v.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .join('practice as pr', 'pr.id', 'v.practice_id')
    .where('v.id', visitId)
    .first(
      'v.id',
      'v.practice_id',
      'v.case_id',
      'v.milestone',
      'v.status',
      'v.due_date',
      'v.window_start',
      'v.window_end',
      'v.booked_date',
      'v.proposed_start',
      'pr.name as practice_name',
      'pr.time_zone',
      'p.id as patient_id',
      'p.recall_contact',
    );
  if (lock) q.forUpdate('v', 'p');
  return (await q) as LinkedVisit | undefined;
}

function appointmentText(start: string | null, timeZone: string, now: Date): string | null {
  if (!start) return null;
  const d = new Date(start);
  if (d.getTime() <= now.getTime()) return null;
  return new Intl.DateTimeFormat('en-GB', { timeZone, dateStyle: 'full', timeStyle: 'short' }).format(d);
}

// --- reply ----------------------------------------------------------------------------------------

export interface ReplyView {
  practiceName: string;
  /** "March 2026": only the month of the due date is shown. */
  dueMonth: string;
  /** The proposed appointment, in the practice's time zone, if one is proposed. */
  appointment: string | null;
}

/** What the reply page shows for a token, or why it is refused. Reads only. */
export async function lookupReply(em: EntityManager, token: string, now: Date = new Date()): Promise<{ ok: true; view: ReplyView } | Refused> {
  const verified = verifyReplyToken(token, linkSecret(), now);
  if (!verified.ok) return refuse(verified.reason);
  const [visit, used] = await Promise.all([
    linkedVisit(em, verified.payload.visitId),
    knexOf(em)('reply_nonce').where({ nonce: verified.payload.nonce }).first('nonce'),
  ]);
  if (!visit) return refuse('unknown');
  if (used) return refuse('used');
  if (isFinalStatus(visit.status)) return refuse('closed');
  return {
    ok: true,
    view: { practiceName: visit.practice_name, dueMonth: dueMonth(visit.due_date), appointment: appointmentText(visit.proposed_start, visit.time_zone, now) },
  };
}

export const ReplyInput = z.object({
  token: z.string({ error: 'The link is missing.' }).min(1, 'The link is missing.').max(1024, 'This link is not valid.'),
  answer: z.enum(REPLY_ANSWERS, { error: 'Choose one of the three answers.' }),
  note: z.preprocess((v) => (v === '' ? undefined : v), text({ max: 1000, tooLong: 'At most 1000 characters, please.' }).optional()),
});

export const REPLY_THANKS: Record<ReplyAnswer, string> = {
  confirmed: 'Thank you — your follow-up review is confirmed. The practice looks forward to seeing you.',
  another_time: 'Thank you — the practice will be in touch to offer you another time.',
  declined: 'Thank you for letting us know. The practice will not send you further follow-up invitations for this treatment.',
};

/**
 * Records a patient's answer. Confirm: the visit becomes confirmed (booked for the proposed
 * time, if any). Another time: the answer and note go to the contact log, a proposed time is
 * withdrawn, a confirmed visit goes back to invited. Decline: the visit and the case's later open
 * visits become declined.
 */
export async function answerReply(em: EntityManager, raw: unknown, origin: Origin, now: Date = new Date()): Promise<{ ok: true; answer: ReplyAnswer; message: string } | Refused> {
  const input = parseInput(ReplyInput, raw);
  const verified = verifyReplyToken(input.token, linkSecret(), now);
  if (!verified.ok) return refuse(verified.reason);
  const payload: LinkTokenPayload = verified.payload;

  const outcome = await em.transactional(async (tx): Promise<Refused | { ok: true; visit: LinkedVisit; changed: string[] }> => {
    const knex = knexOf(tx);
    const visit = await linkedVisit(tx, payload.visitId, true);
    if (!visit) return refuse('unknown');
    if (isFinalStatus(visit.status)) return refuse('closed');
    const reminder = payload.reminderId ? await knex('reminder').where({ id: payload.reminderId, visit_id: visit.id }).first('id') : undefined;
    const claimed = await knex('reply_nonce')
      .insert({ nonce: payload.nonce, practice_id: visit.practice_id, visit_id: visit.id, reminder_id: reminder?.id ?? null, answer: input.answer, used_at: now })
      .onConflict('nonce')
      .ignore()
      .returning('nonce');
    if (!claimed.length) return refuse('used');

    const base = { practiceId: visit.practice_id, visitId: visit.id, by: 'patient' as const };
    const entries: Parameters<typeof logContact>[1][number][] = [
      { ...base, kind: 'reply', answer: input.answer, reminderId: reminder?.id ?? null, note: input.note ?? null },
    ];
    const changed: string[] = [];
    if (input.answer === 'confirmed') {
      const proposed = visit.proposed_start ? new Date(visit.proposed_start) : null;
      const booked = proposed && proposed.getTime() > now.getTime() ? todayIn(visit.time_zone, proposed) : null;
      const confirmed =
        visit.status !== 'confirmed' &&
        (await setVisitStatus(tx, visit, { to: 'confirmed', on: todayIn(visit.time_zone, now), by: 'patient' }, null, { ...(booked ? { booked_date: booked } : {}), delivery_failed_at: null })).ok;
      if (confirmed) {
        entries.push({ ...base, kind: 'status_change', fromStatus: visit.status, toStatus: 'confirmed' });
        changed.push(visit.id);
      } else if (booked) {
        await knex('recall_visit').where({ id: visit.id }).update({ booked_date: booked, updated_at: now });
      }
    } else if (input.answer === 'another_time') {
      if (visit.status === 'confirmed') {
        await setVisitStatus(tx, visit, { to: 'invited', on: todayIn(visit.time_zone, now), by: 'patient' }, null, { booked_date: null, proposed_start: null });
        entries.push({ ...base, kind: 'status_change', fromStatus: 'confirmed', toStatus: 'invited' });
        changed.push(visit.id);
      } else {
        await knex('recall_visit').where({ id: visit.id }).update({ proposed_start: null, updated_at: now });
      }
    } else {
      const visits = (await knex('recall_visit')
        .where('case_id', visit.case_id)
        .where((b) => b.where('id', visit.id).orWhere('milestone', '>', visit.milestone))
        .forUpdate()
        .select('id', 'status', 'milestone', 'window_start', 'window_end', 'booked_date')) as VisitStatusRow[];
      for (const v of visits) {
        if (v.id !== visit.id && !isOpenStatus(v.status)) continue;
        const declined = await setVisitStatus(tx, v, { to: 'declined', on: todayIn(visit.time_zone, now), by: 'patient' }, null, { proposed_start: null });
        if (!declined.ok) continue;
        entries.push({ ...base, visitId: v.id, kind: 'status_change', fromStatus: v.status, toStatus: 'declined', note: v.id === visit.id ? null : 'Declined with an earlier visit.' });
        changed.push(v.id);
      }
    }
    await logContact(tx, entries);
    if (changed.length) await refreshNextVisit(tx, [visit.case_id]);
    return { ok: true, visit, changed };
  });
  if (!outcome.ok) return outcome;
  await audit(
    em,
    null,
    { action: 'recall.reply', entityType: 'visit', entityId: outcome.visit.id, detail: { answer: input.answer, changedVisitIds: outcome.changed, hasNote: Boolean(input.note) } },
    { practiceId: outcome.visit.practice_id, ip: origin.ip, userAgent: origin.userAgent?.slice(0, 300) ?? null },
  );
  return { ok: true, answer: input.answer, message: REPLY_THANKS[input.answer] };
}

// --- unsubscribe ----------------------------------------------------------------------------------

export interface UnsubscribeView {
  practiceName: string;
  alreadyWithdrawn: boolean;
}

/** What the unsubscribe page shows for a token, or why it is refused. Reads only. */
export async function lookupUnsubscribe(em: EntityManager, token: string, now: Date = new Date()): Promise<{ ok: true; view: UnsubscribeView } | Refused> {
  const verified = verifyUnsubscribeToken(token, linkSecret(), now);
  if (!verified.ok) return refuse(verified.reason);
  const visit = await linkedVisit(em, verified.payload.visitId);
  if (!visit) return refuse('unknown');
  return { ok: true, view: { practiceName: visit.practice_name, alreadyWithdrawn: !visit.recall_contact } };
}

export const UNSUBSCRIBED_MESSAGE =
  'You are unsubscribed: the practice will not send you follow-up review e-mails any more. If you change your mind, please tell the practice.';

/**
 * Withdraws the patient's recall-contact consent (from the page's button or the RFC 8058
 * one-click POST): patient updated (consent off and channel none, `recallConsent`), contact-log
 * entry, audit event. Idempotent.
 */
export async function unsubscribe(
  em: EntityManager,
  token: string,
  origin: Origin,
  via: 'page' | 'one_click',
  now: Date = new Date(),
): Promise<{ ok: true; alreadyWithdrawn: boolean; message: string } | Refused> {
  const verified = verifyUnsubscribeToken(token, linkSecret(), now);
  if (!verified.ok) return refuse(verified.reason);
  const result = await em.transactional(async (tx) => {
    const visit = await linkedVisit(tx, verified.payload.visitId, true);
    if (!visit) return null;
    if (!visit.recall_contact) return { visit, changed: false };
    const withdrawn = recallConsent(false, 'none');
    await knexOf(tx)('patient')
      .where({ id: visit.patient_id })
      .update({ recall_contact: withdrawn.recallContact, recall_channel: withdrawn.recallChannel, updated_at: now });
    await logContact(tx, [
      { practiceId: visit.practice_id, visitId: visit.id, kind: 'consent_withdrawn', by: 'patient', reminderId: null, note: via === 'one_click' ? 'Through the mail program’s unsubscribe button.' : 'Through the unsubscribe page.' },
    ]);
    return { visit, changed: true };
  });
  if (!result) return refuse('unknown');
  if (result.changed) {
    await audit(
      em,
      null,
      { action: 'patient.consent_withdrawn', entityType: 'patient', entityId: result.visit.patient_id, detail: { consent: 'recallContact', via, visitId: result.visit.id, day: todayIn(result.visit.time_zone, now) } },
      { practiceId: result.visit.practice_id, ip: origin.ip, userAgent: origin.userAgent?.slice(0, 300) ?? null },
    );
  }
  return { ok: true, alreadyWithdrawn: !result.changed, message: UNSUBSCRIBED_MESSAGE };
}

/**
 * The `send-reminder` job: one outbox row (entities/Reminder.ts), one e-mail.
 *
 * What is guaranteed, and how
 * ---------------------------
 * SMTP cannot be part of a database transaction: the relay commits a message when it answers
 * 250 to the end of DATA, and only afterwards can we record that. So the send is bracketed by two
 * atomic statements on the outbox row:
 *
 *   1. claim    queued → sending, attempts + 1, claim_expires_at = now + lease (the worker's lock
 *               duration: BullMQ hands a job to another worker only after that much silence) — a
 *               compare-and-set UPDATE that also re-checks consent and the visit's status, so of
 *               two attempts racing for one row exactly one wins
 *   2. SMTP     the message, with a Message-ID derived from the row id — every attempt sends the
 *               very same message (same Message-ID, same links, same calendar UID)
 *   3. finish   sending → sent, message id, contact log, visit planned → invited, audit — one
 *               statement (data-modifying CTEs), so it happens entirely or not at all
 *
 * - A row that is `sent` (or skipped, or given up) is never sent again, whatever the queue
 *   does: duplicate jobs, a repeated scan, a job re-queued after a Redis restart, a retry.
 * - A refusal the relay states (4xx: retried with backoff; 5xx: given up) puts the row back to
 *   `queued`: nothing was accepted, so the next attempt sends normally.
 * - A row found `sending` with its claim still running belongs to a live attempt: this job
 *   waits (moved to delayed) instead of sending beside it.
 * - A row found `sending` with its claim expired is the one uncertain case: the process died
 *   (SIGKILL, power, OOM) or the connection broke somewhere between claim and finish — possibly
 *   after the relay accepted. Then:
 *     · with a delivery check (the local SMTP fake's API at MAILBOX_URL, see jobs/mail.ts), the
 *       relay is asked whether it holds our Message-ID: yes → the row is marked sent without a
 *       second send; no → it is sent. This gives exactly once with the local fake, and with any
 *       relay that can be asked.
 *     · without one (a plain SMTP relay), it is sent again with the same Message-ID: at least
 *       once, and a duplicate can arise only from a crash inside the few milliseconds between the
 *       relay's 250 and the finish commit. Such a duplicate is byte-for-byte the same message
 *       under the same Message-ID, which mail programs and mailbox providers (Gmail among them)
 *       show once.
 * tests/integration/recall-faults.test.ts kills the worker with SIGKILL in the middle of 1,000
 * sends and counts each Message-ID at the fake: exactly one each.
 *
 * Consent is checked in the claim transaction, against the patient row as it is then: no
 * recall-contact consent by e-mail → the row is `skipped` and the job fails as unrecoverable
 * (never retried). A visit that no longer needs contact (confirmed, attended, declined …, or its
 * window has ended), a row of an earlier round (a time was proposed since: lib/recall/reminders.ts)
 * and a proposal whose time has passed are `skipped` and the job completes.
 *
 * The words come from lib/recall/wording.ts for the day the row was queued (so every attempt
 * renders the same message), and every message and calendar file carries the practice's
 * address, phone and e-mail when the practice has given them.
 */
import { UnrecoverableError, type Job } from 'bullmq';
import { randomUUID } from 'node:crypto';
import { JOBS, parseJobData, type SendReminderData } from '@/lib/queue';
import { CONTACT_STATUSES, needsContact, quietDelayMs, type ReminderStep } from '@/lib/recall/reminders';
import { messageWording } from '@/lib/recall/wording';
import { isPastDue } from '@/lib/recall/plan';
import { INVITED_BY_MESSAGE_STATUSES, statusSql, transitionVisit, type VisitStatus } from '@/lib/recall/status';
import { issueReplyToken, issueUnsubscribeToken } from '@/lib/recall/reply-token';
import { appointmentAttachment } from '@/lib/calendar/ics';
import { listUnsubscribeHeaders, reminderSubject } from '@/lib/mail/templates/ReminderEmail';
import {
  EMAIL_CONSENT_SQL,
  fromAddress,
  insertOutboxRows,
  knexOf,
  linkNonce,
  reminderMessageId,
  reminderPolicyOf,
} from '@/lib/services/recall-outbox';
import { todayIn } from '@/lib/services/registry-common';
import { renderReminder } from './mail';
import { claimOf, delayJob, type MailJobContext, sendOnce } from './outbox-send';

export interface SendContext extends MailJobContext {
  /** lib/recall/reply-token.ts deriveLinkSecret(NEXTAUTH_SECRET). */
  linkSecret: Buffer;
}

export type SendOutcome =
  | 'sent'
  | 'resent'
  | 'reconciled'
  | 'already_sent'
  | 'already_failed'
  | 'already_skipped'
  | 'no_longer_needed'
  | 'no_visit';

interface ClaimRow {
  id: string;
  practice_id: string;
  status: 'queued' | 'sending' | 'sent' | 'failed' | 'skipped';
  claim_expires_at: string | null;
  queued_at: string;
  queued_on: string;
  round: number;
  visit_round: number;
  visit_id: string;
  case_id: string;
  visit_status: VisitStatus;
  due_date: string;
  window_end: string;
  proposed_start: string | null;
  given_name: string;
  email: string | null;
  consent: boolean;
  practice_name: string;
  practice_address: string | null;
  practice_phone: string | null;
  practice_email: string | null;
  time_zone: string;
  reminder_policy: unknown;
}

type Claim =
  | { kind: 'done'; outcome: SendOutcome; reminderId?: string }
  | { kind: 'wait'; ms: number; reason: string }
  | { kind: 'no_consent'; reminderId: string }
  | { kind: 'send'; row: ClaimRow; uncertain: boolean };

/** The visit statuses that still need contact (lib/recall/reminders), as an SQL list. */
const CONTACT_STATUSES_SQL = statusSql(CONTACT_STATUSES);

function selectRow(ctx: SendContext, data: SendReminderData): Promise<ClaimRow | undefined> {
  const knex = knexOf(ctx.em());
  return knex('reminder as r')
    .join('recall_visit as v', 'v.id', 'r.visit_id')
    .join('treatment_case as c', 'c.id', 'v.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .join('practice as pr', 'pr.id', 'r.practice_id')
    .where({ 'r.visit_id': data.visitId, 'r.step': data.step, 'r.round': data.round ?? 0, 'r.practice_id': data.practiceId })
    .first(
      'r.id',
      'r.practice_id',
      'r.status',
      'r.claim_expires_at',
      'r.queued_at',
      knex.raw(`to_char(r.queued_on, 'YYYY-MM-DD') as queued_on`),
      'r.round',
      'v.reminder_round as visit_round',
      'v.id as visit_id',
      'v.case_id',
      'v.status as visit_status',
      'v.due_date',
      'v.window_end',
      'v.proposed_start',
      'p.given_name',
      'p.email',
      knex.raw(`${EMAIL_CONSENT_SQL} as consent`),
      'pr.name as practice_name',
      'pr.address as practice_address',
      'pr.phone as practice_phone',
      'pr.contact_email as practice_email',
      'pr.time_zone',
      'pr.reminder_policy',
    ) as Promise<ClaimRow | undefined>;
}

/**
 * Decides what to do with the row and, to send, claims it: one compare-and-set UPDATE that
 * succeeds only if the row is still as read (status and claim) and, at that instant, the visit
 * still needs contact and the patient still agrees to e-mail. PostgreSQL holds the row lock for
 * the statement and re-checks the condition after waiting for a concurrent writer, so of two
 * attempts racing for one row exactly one claims it. A row that changed meanwhile is read again.
 */
async function claim(ctx: SendContext, data: SendReminderData, now: Date): Promise<Claim> {
  const knex = knexOf(ctx.em());
  for (let round = 0; round < 5; round++) {
    const row = await selectRow(ctx, data);
    if (!row) {
      // A job without its outbox row (queued by hand or by an older release): write the row first.
      const visit = await knex('recall_visit').where({ id: data.visitId, practice_id: data.practiceId }).first('id');
      if (!visit) return { kind: 'done', outcome: 'no_visit' };
      await insertOutboxRows(ctx.em(), [
        { practiceId: data.practiceId, visitId: data.visitId, step: data.step, round: data.round ?? 0, origin: data.origin, requestedBy: data.requestedBy, day: data.day ?? todayIn('UTC', now) },
      ]);
      continue;
    }
    if (row.status === 'sent') return { kind: 'done', outcome: 'already_sent', reminderId: row.id };
    if (row.status === 'failed') return { kind: 'done', outcome: 'already_failed', reminderId: row.id };
    if (row.status === 'skipped') return { kind: 'done', outcome: 'already_skipped', reminderId: row.id };

    const lease = claimOf(row, now);
    if ('wait' in lease) return { kind: 'wait', ms: lease.wait, reason: 'another attempt is sending it' };
    const { uncertain } = lease;
    const unchanged = (q: ReturnType<typeof knex>) =>
      q.where({ id: row.id, status: row.status }).whereRaw('claim_expires_at is not distinct from ?', [row.claim_expires_at]);
    const skip = async (reason: string) =>
      (await unchanged(knex('reminder')).update({ status: 'skipped', last_error: reason, claim_expires_at: null, updated_at: now })) > 0;

    if (!row.consent) {
      if (await skip('No recall-contact consent by e-mail: nothing was sent.')) return { kind: 'no_consent', reminderId: row.id };
      continue;
    }
    const ended = isPastDue({ windowEnd: row.window_end }, todayIn(row.time_zone, now));
    const superseded = row.round !== row.visit_round;
    const proposalPast = data.step === 'proposal' && !(row.proposed_start && new Date(row.proposed_start).getTime() > now.getTime());
    if (!needsContact(row.visit_status) || ended || superseded || proposalPast) {
      const why = superseded
        ? 'a time was proposed since'
        : proposalPast
          ? 'the proposed time has passed'
          : `${row.visit_status}${ended ? ', window ended' : ''}`;
      if (await skip(`The visit no longer needs this message (${why}).`)) {
        return { kind: 'done', outcome: 'no_longer_needed', reminderId: row.id };
      }
      continue;
    }
    const quiet = quietDelayMs(reminderPolicyOf(row.reminder_policy).quietHours, now, row.time_zone);
    if (quiet > 0) return { kind: 'wait', ms: quiet, reason: 'quiet hours' };

    const claimed = await knex.raw(
      `update reminder r set status = 'sending', attempts = r.attempts + 1, claim_expires_at = ?, updated_at = ?
         from recall_visit v, treatment_case c, patient p
        where r.id = ? and r.status = ? and r.claim_expires_at is not distinct from ?
          and v.id = r.visit_id and c.id = v.case_id and p.id = c.patient_id
          and v.status in ${CONTACT_STATUSES_SQL} and r.round = v.reminder_round and ${EMAIL_CONSENT_SQL}
        returning r.id`,
      [new Date(now.getTime() + ctx.leaseMs), now, row.id, row.status, row.claim_expires_at],
    );
    if ((claimed as { rows: unknown[] }).rows.length) return { kind: 'send', row, uncertain };
  }
  throw new Error('The outbox row kept changing while it was being claimed; trying again later.');
}

/** The message of a claimed row: the same on every attempt. */
async function compose(ctx: SendContext, row: ClaimRow, step: ReminderStep, messageId: string, now: Date) {
  const queuedAt = new Date(row.queued_at);
  const reply = issueReplyToken({ visitId: row.visit_id, reminderId: row.id, nonce: linkNonce('reply', row.id) }, ctx.linkSecret, queuedAt);
  const unsubscribe = issueUnsubscribeToken({ visitId: row.visit_id, reminderId: row.id, nonce: linkNonce('unsubscribe', row.id) }, ctx.linkSecret, queuedAt);
  const base = ctx.appUrl.replace(/\/+$/, '');
  const replyUrl = `${base}/r/${reply.token}`;
  const links = {
    confirm: `${replyUrl}?answer=confirmed`,
    reschedule: `${replyUrl}?answer=another_time`,
    decline: `${replyUrl}?answer=declined`,
    unsubscribe: `${base}/u/${unsubscribe.token}`,
  };
  const proposed = row.proposed_start ? new Date(row.proposed_start) : null;
  const appointment = proposed && proposed.getTime() > now.getTime() ? proposed : null;
  const contact = practiceContact(row);
  const wording = messageWording(step, row.due_date, row.queued_on, reminderPolicyOf(row.reminder_policy));
  const { html, text } = await renderReminder({
    wording,
    firstName: row.given_name,
    practiceName: row.practice_name,
    dueDate: row.due_date,
    links,
    contact,
    ...(appointment ? { appointment: appointmentWords(appointment, row.time_zone) } : {}),
  });
  const from = fromAddress(ctx.mailFrom);
  return {
    from: { name: row.practice_name, address: from },
    to: row.email!,
    subject: reminderSubject(wording, row.practice_name, row.due_date),
    html,
    text,
    messageId,
    // base64 bodies: cheaper to encode than quoted-printable, and every mail program reads them.
    textEncoding: 'base64' as const,
    headers: { ...listUnsubscribeHeaders(`${base}/api/unsubscribe/${unsubscribe.token}`), 'Auto-Submitted': 'auto-generated' },
    attachments: appointment
      ? [
          appointmentAttachment({
            visitId: row.visit_id,
            proposalId: String(appointment.getTime()),
            start: appointment,
            practice: { name: row.practice_name, email: contact.email ?? from, ...(contact.address ? { address: contact.address } : {}), ...(contact.phone ? { phone: contact.phone } : {}) },
            stamp: queuedAt,
          }),
        ]
      : [],
  };
}

/** The practice's address, phone and e-mail as the practice settings give them (absent ones left out). */
function practiceContact(row: Pick<ClaimRow, 'practice_address' | 'practice_phone' | 'practice_email'>): { address?: string; phone?: string; email?: string } {
  return {
    ...(row.practice_address ? { address: row.practice_address } : {}),
    ...(row.practice_phone ? { phone: row.practice_phone } : {}),
    ...(row.practice_email ? { email: row.practice_email } : {}),
  };
}

/** "Tuesday 3 March 2026 at 09:30" in the practice's time zone. */
export function appointmentWords(start: Date, timeZone: string): string {
  const f = (o: Intl.DateTimeFormatOptions) => new Intl.DateTimeFormat('en-GB', { timeZone, ...o }).format(start);
  return `${f({ weekday: 'long', day: 'numeric', month: 'long', year: 'numeric' })} at ${f({ hour: '2-digit', minute: '2-digit', hourCycle: 'h23' })}`;
}

/**
 * A sent reminder moves a visit in INVITED_BY_MESSAGE_STATUSES (planned) to what lib/recall
 * transitionVisit gives for 'invited' — checked once here, so the SQL below writes the rule's columns.
 */
const INVITE_FROM_SQL = statusSql(INVITED_BY_MESSAGE_STATUSES);
const SENT = (() => {
  const t = transitionVisit({ status: INVITED_BY_MESSAGE_STATUSES[0]!, windowStart: '0000-01-01', windowEnd: '9999-12-31' }, { to: 'invited', on: '0000-01-01', by: 'system' });
  if (!t.ok) throw new Error(`A sent reminder cannot invite: ${t.message}`);
  return t.changes;
})();

/**
 * sending → sent, with the visit (planned → invited, delivery flag cleared), the contact log and
 * the audit trail, in one SQL statement (atomic without a transaction round trip).
 */
async function finish(ctx: SendContext, row: ClaimRow, step: ReminderStep, messageId: string, now: Date, how: SendOutcome): Promise<void> {
  const knex = knexOf(ctx.em());
  await knex.raw(
    `with r as (
       update reminder set status = 'sent', message_id = ?, sent_at = ?, sent_on = ?, claim_expires_at = null, last_error = null, updated_at = ?
        where id = ? and status = 'sending'
        returning id, practice_id, visit_id, step),
     b as (select v.id, v.status, v.case_id from recall_visit v join r on v.id = r.visit_id for update of v),
     v as (
       update recall_visit v
          set status = case when b.status in ${INVITE_FROM_SQL} then ? else v.status end,
              status_changed_at = case when b.status in ${INVITE_FROM_SQL} then ? else v.status_changed_at end,
              status_changed_by_id = case when b.status in ${INVITE_FROM_SQL} then null else v.status_changed_by_id end,
              reinvite_needed = case when b.status in ${INVITE_FROM_SQL} then ? else v.reinvite_needed end,
              delivery_failed_at = null, updated_at = ?
         from b where v.id = b.id
       returning b.status as before, v.case_id),
     sent_log as (
       insert into contact_log_entry (id, practice_id, visit_id, "at", kind, "by", reminder_id, step)
       select ?, r.practice_id, r.visit_id, ?, 'message_sent', 'system', r.id, r.step from r),
     status_log as (
       insert into contact_log_entry (id, practice_id, visit_id, "at", kind, "by", from_status, to_status)
       select ?, r.practice_id, r.visit_id, ?, 'status_change', 'system', b.status, ? from r join b on b.id = r.visit_id where b.status in ${INVITE_FROM_SQL}),
     trail as (
       insert into audit_event (id, "at", practice_id, action, entity_type, entity_id, detail)
       select ?, ?, r.practice_id, 'recall.reminder_sent', 'visit', r.visit_id::text, cast(? as jsonb) from r)
     select (select count(*) from r)::int as updated, (select before from v) as before, (select case_id from v) as case_id`,
    [
      messageId, now, todayIn(row.time_zone, now), now, row.id,
      SENT.status, now, SENT.reinviteNeeded ?? false, now,
      randomUUID(), now,
      randomUUID(), new Date(now.getTime() + 1), SENT.status,
      randomUUID(), now, JSON.stringify({ reminderId: row.id, step, how }),
    ],
  );
  // The case's next-visit summary is kept by the statement-level triggers on recall_visit
  // (Migration20261201230524: lamina_case_visit_summary), which fire for the update above.
}

/**
 * The job handler (also called directly by tests). Returns what happened; throws to let BullMQ
 * retry (a relay's temporary refusal, a broken connection) or UnrecoverableError to stop.
 */
export async function processSendReminder(
  ctx: SendContext,
  job: Pick<Job, 'data'> & Partial<Job>,
  token?: string,
): Promise<{ outcome: SendOutcome; reminderId?: string }> {
  const data = parseJobData(JOBS.sendReminder, job.data);
  const now = ctx.now?.() ?? new Date();
  const c = await claim(ctx, data, now);
  if (c.kind === 'done') return { outcome: c.outcome, reminderId: c.reminderId };
  if (c.kind === 'wait') return delayJob(job as Job, token, c.ms, c.reason);
  if (c.kind === 'no_consent') throw new UnrecoverableError('The patient has not agreed to recall contact by e-mail: no message was sent.');

  const { row, uncertain } = c;
  const messageId = reminderMessageId(row.id, ctx.mailFrom);
  const how = await sendOnce({
    ctx,
    job: 'send-reminder',
    noun: 'reminder',
    table: 'reminder',
    rowId: row.id,
    to: row.email!,
    messageId,
    uncertain,
    now,
    compose: () => compose(ctx, row, data.step, messageId, now),
    finish: (result, at) => finish(ctx, row, data.step, messageId, at, result),
  });
  return { outcome: how, reminderId: row.id };
}

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
import { coalesce } from './coalesce';
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
  step: ReminderStep;
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

/** The row a job sends: its visit, step and round in its practice. */
type RowKey = Pick<SendReminderData, 'practiceId' | 'visitId' | 'step' | 'round'>;
const keyOf = (k: { practiceId: string; visitId: string; step: string; round?: number }) => `${k.practiceId}/${k.visitId}/${k.step}/${k.round ?? 0}`;

/** The rows of several jobs in one SELECT (one answer per key, in order; undefined when there is none). */
async function selectRows(ctx: SendContext, keys: readonly RowKey[]): Promise<(ClaimRow | undefined)[]> {
  const knex = knexOf(ctx.em());
  const rows = (await knex('reminder as r')
    .join('recall_visit as v', 'v.id', 'r.visit_id')
    .join('treatment_case as c', 'c.id', 'v.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .join('practice as pr', 'pr.id', 'r.practice_id')
    .whereIn(['r.visit_id', 'r.step', 'r.round', 'r.practice_id'], keys.map((k) => [k.visitId, k.step, k.round ?? 0, k.practiceId]))
    .select(
      'r.id',
      'r.practice_id',
      'r.step',
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
    )) as ClaimRow[];
  const byKey = new Map(rows.map((r) => [keyOf({ practiceId: r.practice_id, visitId: r.visit_id, step: r.step, round: r.round }), r]));
  return keys.map((k) => byKey.get(keyOf(k)));
}

/** A compare-and-set claim of one row: it must still be as it was read (status and claim). */
interface ClaimItem {
  id: string;
  status: ClaimRow['status'];
  claim: string | null;
  expires: Date;
  at: Date;
}

/**
 * A PostgreSQL array literal of row ids (knex would spread a JS array into several bindings). With
 * `id = any(cast(? as uuid[]))` beside the join on jsonb_to_recordset (which the planner guesses at
 * 100 rows), a batched statement reaches its rows by the primary key instead of scanning the table.
 */
function uuidArray(ids: readonly string[]): string {
  for (const id of ids) if (!/^[0-9a-f-]{36}$/i.test(id)) throw new Error('uuidArray: not a uuid');
  return `{${ids.join(',')}}`;
}

/**
 * queued → sending (or an expired claim taken over) for several rows in one UPDATE; true for each
 * row this call claimed. Each row is claimed only if it is still as read and, at that instant, its
 * visit still needs contact and the patient still agrees to e-mail: PostgreSQL locks each row and
 * re-checks these conditions after waiting for a concurrent writer, so of two attempts racing for
 * one row exactly one claims it. A row asked for twice in one call is claimed for the first only.
 */
async function claimRows(ctx: SendContext, items: readonly ClaimItem[]): Promise<boolean[]> {
  const claimed = (await knexOf(ctx.em()).raw(
    `update reminder r set status = 'sending', attempts = r.attempts + 1, claim_expires_at = x.expires, updated_at = x.at
       from jsonb_to_recordset(cast(? as jsonb)) as x(id uuid, status text, claim timestamptz, expires timestamptz, at timestamptz),
            recall_visit v, treatment_case c, patient p
      where r.id = any(cast(? as uuid[])) and r.id = x.id and r.status = x.status and r.claim_expires_at is not distinct from x.claim
        and v.id = r.visit_id and c.id = v.case_id and p.id = c.patient_id
        and v.status in ${CONTACT_STATUSES_SQL} and r.round = v.reminder_round and ${EMAIL_CONSENT_SQL}
      returning r.id`,
    [JSON.stringify(items.map((i) => ({ ...i, claim: i.claim === null ? null : new Date(i.claim).toISOString() }))), uuidArray(items.map((i) => i.id))],
  )) as { rows: { id: string }[] };
  const won = new Set(claimed.rows.map((r) => r.id));
  return items.map((i) => won.delete(i.id));
}

/**
 * The statements of jobs running at once in this process go together (jobs/coalesce.ts): the
 * reads of their rows in one SELECT, their claims in one UPDATE, their finishes in one statement.
 * Each row keeps its own compare-and-set, so batching changes how many statements are sent, not
 * what any of them may do; a batch that fails is run again row by row.
 */
const BATCH_MAX = 64;

interface Batches {
  read: (key: RowKey) => Promise<ClaimRow | undefined>;
  claim: (item: ClaimItem) => Promise<boolean>;
  finish: (item: FinishItem) => Promise<void>;
}

const batchesOf = new WeakMap<SendContext, Batches>();

function batches(ctx: SendContext): Batches {
  let b = batchesOf.get(ctx);
  if (!b) {
    b = {
      read: coalesce((keys: RowKey[]) => selectRows(ctx, keys), { maxBatch: BATCH_MAX }),
      claim: coalesce((items: ClaimItem[]) => claimRows(ctx, items), { maxBatch: BATCH_MAX }),
      finish: coalesce((items: FinishItem[]) => finishRows(ctx, items), { maxBatch: BATCH_MAX }),
    };
    batchesOf.set(ctx, b);
  }
  return b;
}

/**
 * Decides what to do with the row and, to send, claims it (claimRows: a compare-and-set that
 * succeeds only if the row is still as read and the visit and consent still allow it). A row that
 * changed meanwhile is read again.
 */
async function claim(ctx: SendContext, data: SendReminderData, now: Date): Promise<Claim> {
  const knex = knexOf(ctx.em());
  const batch = batches(ctx);
  for (let round = 0; round < 5; round++) {
    const row = await batch.read(data);
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

    if (await batch.claim({ id: row.id, status: row.status, claim: row.claim_expires_at, expires: new Date(now.getTime() + ctx.leaseMs), at: now })) {
      return { kind: 'send', row, uncertain };
    }
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

/** One row to finish: how it was sent, when, and the ids of the rows the finish writes. */
interface FinishItem {
  id: string;
  visitId: string;
  messageId: string;
  at: Date;
  /** The practice's day of `at`. */
  sentOn: string;
  how: SendOutcome;
}

/**
 * sending → sent, with the visit (planned → invited, delivery flag cleared), the contact log and
 * the audit trail, in one SQL statement (atomic without a transaction round trip) for several
 * rows. A row no longer `sending` is left alone (so finishing twice writes nothing twice). Rows of
 * one visit go in separate statements, so each sees the visit as the one before left it.
 */
async function finishRows(ctx: SendContext, items: readonly FinishItem[]): Promise<void[]> {
  const knex = knexOf(ctx.em());
  let rest = [...items];
  while (rest.length) {
    const visits = new Set<string>();
    const now: FinishItem[] = [];
    const later: FinishItem[] = [];
    for (const i of rest) {
      (visits.has(i.visitId) ? later : now).push(i);
      visits.add(i.visitId);
    }
    rest = later;
    const rows = now.map((i) => ({
      id: i.id,
      message_id: i.messageId,
      at: i.at.toISOString(),
      at_status: new Date(i.at.getTime() + 1).toISOString(),
      sent_on: i.sentOn,
      how: i.how,
      sent_log: randomUUID(),
      status_log: randomUUID(),
      audit: randomUUID(),
    }));
    await knex.raw(
      `with x as (
         select * from jsonb_to_recordset(cast(? as jsonb))
             as x(id uuid, message_id text, "at" timestamptz, at_status timestamptz, sent_on date, how text, sent_log uuid, status_log uuid, audit uuid)),
       r as (
         update reminder t set status = 'sent', message_id = x.message_id, sent_at = x.at, sent_on = x.sent_on, claim_expires_at = null, last_error = null, updated_at = x.at
           from x
          where t.id = any(cast(? as uuid[])) and t.id = x.id and t.status = 'sending'
          returning t.id, t.practice_id, t.visit_id, t.step, x.at, x.at_status, x.how, x.sent_log, x.status_log, x.audit),
       b as (select v.id, v.status, v.case_id from recall_visit v join r on v.id = r.visit_id order by v.id for update of v),
       v as (
         update recall_visit v
            set status = case when b.status in ${INVITE_FROM_SQL} then ? else v.status end,
                status_changed_at = case when b.status in ${INVITE_FROM_SQL} then r.at else v.status_changed_at end,
                status_changed_by_id = case when b.status in ${INVITE_FROM_SQL} then null else v.status_changed_by_id end,
                reinvite_needed = case when b.status in ${INVITE_FROM_SQL} then ? else v.reinvite_needed end,
                delivery_failed_at = null, updated_at = r.at
           from b join r on r.visit_id = b.id
          where v.id = b.id
         returning v.id),
       sent_log as (
         insert into contact_log_entry (id, practice_id, visit_id, "at", kind, "by", reminder_id, step)
         select r.sent_log, r.practice_id, r.visit_id, r.at, 'message_sent', 'system', r.id, r.step from r),
       status_log as (
         insert into contact_log_entry (id, practice_id, visit_id, "at", kind, "by", from_status, to_status)
         select r.status_log, r.practice_id, r.visit_id, r.at_status, 'status_change', 'system', b.status, ? from r join b on b.id = r.visit_id where b.status in ${INVITE_FROM_SQL}),
       trail as (
         insert into audit_event (id, "at", practice_id, action, entity_type, entity_id, detail)
         select r.audit, r.at, r.practice_id, 'recall.reminder_sent', 'visit', r.visit_id::text, jsonb_build_object('reminderId', r.id, 'step', r.step, 'how', r.how) from r)
       select (select count(*) from r)::int as updated, (select count(*) from v)::int as visits`,
      [JSON.stringify(rows), uuidArray(now.map((i) => i.id)), SENT.status, SENT.reinviteNeeded ?? false, SENT.status],
    );
  }
  // The case's next-visit summary is kept by the statement-level triggers on recall_visit
  // (Migration20261201230524: lamina_case_visit_summary), which fire for the update above.
  return items.map(() => undefined);
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
    finish: (how, at) => batches(ctx).finish({ id: row.id, visitId: row.visit_id, messageId, at, sentOn: todayIn(row.time_zone, at), how }),
  });
  return { outcome: how, reminderId: row.id };
}

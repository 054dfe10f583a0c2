import 'server-only';
import { createHash, randomUUID } from 'node:crypto';
import type { DefaultJobOptions } from 'bullmq';
import type { Redis } from 'ioredis';
import { z } from 'zod';
import type { EntityManager } from '@mikro-orm/postgresql';
import {
  QUEUES,
  REMINDER_JOB_OPTIONS,
  enqueueReminders,
  openRemindersQueue,
  producerFor,
  type OpenQueueOptions,
  type RemindersQueue,
  type SendReminderInput,
} from '@/lib/queue';
import {
  DEFAULT_REMINDER_POLICY,
  ReminderPolicySchema,
  reminderJobId,
  type ReminderPolicy,
  type ReminderStep,
  type SentStep,
} from '@/lib/recall/reminders';
import { CONTACT_STATUSES } from '@/lib/recall/status';
import type { CalendarDate } from '@/lib/registry/calendar-date';
import type { ReminderStatus } from '@/entities';
import { env } from '@/lib/env';
import { knexOf } from './registry-common';

/**
 * The reminder outbox (entities/Reminder.ts) and the queue it feeds, shared by the recall scan
 * (jobs/recall-scan.ts), the worker (jobs/send-reminder.ts) and the desk's "send now"
 * (lib/services/recall-desk.ts).
 *
 * The rule every producer follows: first the outbox row (unique per visit, round and step — a
 * second insert for the same step is a no-op), committed; then the job under `reminderJobId`. A crash
 * or a Redis outage between the two leaves a `queued` row without a job, which
 * `reconcileOutbox` (run by every scan) queues again. So a step is queued at most once in the
 * database and never lost in Redis.
 */

// --- queue settings -------------------------------------------------------------------------------

/**
 * Overrides for tests and benchmarks only (production uses lib/queue's REMINDER_JOB_OPTIONS):
 * QUEUE_PREFIX (BullMQ key prefix), REMINDER_ATTEMPTS, REMINDER_BACKOFF_MS (first retry wait;
 * exponential from there, no jitter).
 */
const QueueEnv = z.object({
  QUEUE_PREFIX: z
    .string()
    .regex(/^[A-Za-z0-9_-]{1,40}$/, 'QUEUE_PREFIX uses letters, digits, - and _ (at most 40).')
    .optional(),
  REMINDER_ATTEMPTS: z.coerce.number().int().min(1).max(20).optional(),
  REMINDER_BACKOFF_MS: z.coerce.number().int().min(1).max(3_600_000).optional(),
});

export interface ReminderQueueSettings {
  prefix?: string;
  jobOptions: DefaultJobOptions;
  /** True when the defaults are overridden (tests). */
  overridden: boolean;
}

export function reminderQueueSettings(source: Record<string, string | undefined> = process.env): ReminderQueueSettings {
  const parsed = QueueEnv.safeParse(source);
  if (!parsed.success) throw new Error(`Invalid queue settings: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`);
  const e = parsed.data;
  const jobOptions: DefaultJobOptions = {
    ...REMINDER_JOB_OPTIONS,
    ...(e.REMINDER_ATTEMPTS ? { attempts: e.REMINDER_ATTEMPTS } : {}),
    ...(e.REMINDER_BACKOFF_MS ? { backoff: { type: 'exponential', delay: e.REMINDER_BACKOFF_MS } } : {}),
  };
  return {
    ...(e.QUEUE_PREFIX ? { prefix: e.QUEUE_PREFIX } : {}),
    jobOptions,
    overridden: Boolean(e.REMINDER_ATTEMPTS || e.REMINDER_BACKOFF_MS),
  };
}

/** How lib/queue opens a queue of the reminders' rules: the test overrides when they are set. */
export function outboxQueueOptions(settings: ReminderQueueSettings, options: { failFast?: boolean; log?: (m: string) => void } = {}): OpenQueueOptions {
  return { prefix: settings.prefix, failFast: options.failFast, log: options.log, ...(settings.overridden ? { jobOptions: settings.jobOptions } : {}) };
}

/** The reminders queue (lib/queue), with the test overrides when they are set. */
export function openReminderQueue(
  connection: Redis,
  settings: ReminderQueueSettings = reminderQueueSettings(),
  options: { failFast?: boolean; log?: (m: string) => void } = {},
): RemindersQueue {
  return openRemindersQueue(connection, outboxQueueOptions(settings, options));
}

/**
 * The web process's producer for "send now" (lib/queue's producerFor): a fail-fast connection, so
 * a desk request answers at once while Redis is down (the outbox rows are kept and the next scan
 * queues them).
 */
export function reminderProducer(): Promise<RemindersQueue> {
  return producerFor(QUEUES.reminders, {
    url: env.REDIS_URL,
    name: 'web-reminders',
    open: (c) => openReminderQueue(c, reminderQueueSettings(), { failFast: true }),
  });
}

// --- the practice's calendar ---------------------------------------------------------------------


// --- policy ---------------------------------------------------------------------------------------

/** A practice's stored reminder policy, parsed; one that no longer parses falls back to the default. */
export function reminderPolicyOf(stored: unknown): ReminderPolicy {
  const parsed = ReminderPolicySchema.safeParse(stored ?? {});
  return parsed.success ? parsed.data : DEFAULT_REMINDER_POLICY;
}

// --- identities of a row ----------------------------------------------------------------------------

/** The address part of MAIL_FROM ('Lamina <no-reply@lamina.invalid>' → 'no-reply@lamina.invalid'). */
export function fromAddress(mailFrom: string = env.MAIL_FROM): string {
  const m = /<([^<>\s]+@[^<>\s]+)>/.exec(mailFrom);
  return (m ? m[1]! : mailFrom.trim()).toLowerCase();
}

/** The Message-ID of an outbox row: the same for every attempt. */
export function reminderMessageId(reminderId: string, mailFrom: string = env.MAIL_FROM): string {
  const domain = fromAddress(mailFrom).split('@')[1] ?? 'lamina.invalid';
  return `<reminder-${reminderId}@${domain}>`;
}

/**
 * The nonce of a link in the message of an outbox row, derived from the row id so every
 * attempt renders the same message. Nonces are not secret (lib/recall/reply-token.ts): the
 * signing key is.
 */
export function linkNonce(purpose: 'reply' | 'unsubscribe', reminderId: string): string {
  return createHash('sha256').update(`lamina-link-nonce\u0000${purpose}\u0000${reminderId}`).digest().subarray(0, 16).toString('base64url');
}

// --- writing rows -------------------------------------------------------------------------------

export interface OutboxEntry {
  practiceId: string;
  visitId: string;
  step: ReminderStep;
  /** The visit's reminder round (lib/recall/reminders.ts); 0 when left out. */
  round?: number;
  origin: 'scan' | 'desk';
  requestedBy?: string | null;
  /** The practice's day on which the step was entered. */
  day: CalendarDate;
}

export interface OutboxRow extends OutboxEntry {
  id: string;
  status: ReminderStatus;
}

export { knexOf };

/**
 * Inserts one outbox row per entry; an entry whose visit already has a row for that round and
 * step is left as it is (unique visit + round + step). Returns only the rows that are new.
 */
export async function insertOutboxRows(em: EntityManager, entries: readonly OutboxEntry[]): Promise<OutboxRow[]> {
  const knex = knexOf(em);
  const out: OutboxRow[] = [];
  const now = new Date();
  for (let i = 0; i < entries.length; i += 1000) {
    const chunk = entries.slice(i, i + 1000);
    const inserted = (await knex('reminder')
      .insert(
        chunk.map((e) => ({
          id: randomUUID(),
          practice_id: e.practiceId,
          visit_id: e.visitId,
          step: e.step,
          round: e.round ?? 0,
          origin: e.origin,
          requested_by_id: e.requestedBy ?? null,
          status: 'queued',
          attempts: 0,
          queued_on: e.day,
          queued_at: now,
          updated_at: now,
        })),
      )
      .onConflict(['visit_id', 'round', 'step'])
      .ignore()
      .returning(['id', 'visit_id', 'round', 'step'])) as { id: string; visit_id: string; round: number; step: ReminderStep }[];
    const byKey = new Map(chunk.map((e) => [`${e.visitId}/${e.round ?? 0}/${e.step}`, e]));
    for (const r of inserted) {
      const e = byKey.get(`${r.visit_id}/${r.round}/${r.step}`)!;
      out.push({ ...e, id: r.id, status: 'queued' });
    }
  }
  return out;
}

function payloadOf(e: OutboxEntry): SendReminderInput {
  return {
    practiceId: e.practiceId,
    visitId: e.visitId,
    step: e.step,
    ...(e.round ? { round: e.round } : {}),
    origin: e.origin,
    ...(e.requestedBy ? { requestedBy: e.requestedBy } : {}),
    day: e.day,
  };
}

/** Queues the jobs of outbox rows under their stable job ids (a job that exists is left alone). */
export async function enqueueOutbox(queue: RemindersQueue, rows: readonly OutboxEntry[], delayMs = 0): Promise<number> {
  for (let i = 0; i < rows.length; i += 1000) {
    await enqueueReminders(queue, rows.slice(i, i + 1000).map(payloadOf), { delay: delayMs });
  }
  return rows.length;
}

// --- reading history ------------------------------------------------------------------------------

/**
 * The reminder history of visits for lib/recall/reminders: every outbox row (queued, sending,
 * sent, failed or skipped), `on` the day it was sent, or queued when not sent, with its round
 * (the rules take only the visit's current round: `ofRound`).
 */
export async function reminderHistory(em: EntityManager, visitIds: readonly string[]): Promise<Map<string, HistoryStep[]>> {
  const out = new Map<string, HistoryStep[]>();
  const knex = knexOf(em);
  for (let i = 0; i < visitIds.length; i += 5000) {
    const rows = (await knex('reminder')
      .whereIn('visit_id', visitIds.slice(i, i + 5000))
      .select('visit_id', 'step', 'round', 'status', 'queued_on', 'sent_on')) as {
      visit_id: string;
      step: ReminderStep;
      round: number;
      status: ReminderStatus;
      queued_on: string;
      sent_on: string | null;
    }[];
    for (const r of rows) {
      const list = out.get(r.visit_id) ?? [];
      list.push({ step: r.step, on: r.sent_on ?? r.queued_on, status: r.status, round: r.round });
      out.set(r.visit_id, list);
    }
  }
  return out;
}

export type HistoryStep = SentStep & { status: ReminderStatus; round: number };

/** The steps of one round (a visit's current `reminder_round`): what lib/recall's rules count. */
export function ofRound<T extends { round: number }>(steps: readonly T[] | undefined, round: number): T[] {
  return (steps ?? []).filter((s) => s.round === round);
}

/** The day (in `timeZone`) of each visit's latest patient reply. */
export async function lastReplies(em: EntityManager, visitIds: readonly string[], timeZone: string): Promise<Map<string, CalendarDate>> {
  const out = new Map<string, CalendarDate>();
  const knex = knexOf(em);
  for (let i = 0; i < visitIds.length; i += 5000) {
    const rows = (await knex('contact_log_entry')
      .whereIn('visit_id', visitIds.slice(i, i + 5000))
      .where('kind', 'reply')
      .groupBy('visit_id')
      .select('visit_id', knex.raw(`to_char(max(("at" at time zone ?)::date), 'YYYY-MM-DD') as day`, [timeZone]))) as {
      visit_id: string;
      day: string;
    }[];
    for (const r of rows) out.set(r.visit_id, r.day);
  }
  return out;
}

/** SQL for "the patient's recall channel is e-mail and an address is on file". Alias: p patient. */
export const EMAIL_ADDRESS_SQL = `(p.recall_channel = 'email' and p.email is not null and p.email <> '')`;

/**
 * SQL for "the patient agrees to recall contact by e-mail": consent given, channel e-mail, an
 * address on file, neither the patient nor the case archived. Aliases: p patient, c case.
 */
export const EMAIL_CONSENT_SQL = `(p.recall_contact and ${EMAIL_ADDRESS_SQL} and p.archived_at is null and c.archived_at is null)`;

// --- failures and recovery ------------------------------------------------------------------------

/**
 * Gives a row up after its last attempt: status failed, the visit flagged for the coordinator
 * ("delivery failed"), a contact-log entry and an audit event. Only a row still queued or
 * sending changes (so the worker's 'failed' event and the scan's reconciliation may both call
 * it). Returns true when it changed the row.
 */
export async function markReminderFailed(em: EntityManager, reminderId: string, reason: string): Promise<boolean> {
  return em.transactional(async (tx) => {
    const knex = knexOf(tx);
    const now = new Date();
    const [row] = (await knex('reminder')
      .where({ id: reminderId })
      .whereIn('status', ['queued', 'sending'])
      .update({ status: 'failed', failed_at: now, claim_expires_at: null, last_error: reason.slice(0, 500), updated_at: now })
      .returning(['id', 'practice_id', 'visit_id', 'step'])) as { id: string; practice_id: string; visit_id: string; step: ReminderStep }[];
    if (!row) return false;
    // Flag the visit only while it still needs contact (not if it was booked by phone meanwhile).
    await knex('recall_visit').where({ id: row.visit_id }).whereIn('status', CONTACT_STATUSES).update({ delivery_failed_at: now, updated_at: now });
    await knex('contact_log_entry').insert({
      id: randomUUID(),
      practice_id: row.practice_id,
      visit_id: row.visit_id,
      at: now,
      kind: 'delivery_failed',
      by: 'system',
      reminder_id: row.id,
      step: row.step,
      note: reason.slice(0, 1000),
    });
    await knex('audit_event').insert({
      id: randomUUID(),
      at: now,
      practice_id: row.practice_id,
      action: 'recall.reminder_failed',
      entity_type: 'visit',
      entity_id: row.visit_id,
      detail: JSON.stringify({ reminderId: row.id, step: row.step, reason: reason.slice(0, 200) }),
    });
    return true;
  });
}

export interface ReconcileResult {
  /** Rows still queued or sending. */
  open: number;
  /** Of those, rows whose job had gone (Redis restarted or the enqueue never happened) and was queued again. */
  requeued: number;
  /** Rows whose job had failed for good without the row being marked (the worker died first). */
  finalized: number;
}

/**
 * Makes Redis agree with the outbox: every row still `queued` or `sending` must have a live
 * job. A missing job (Redis restarted without its data, or the process died between commit
 * and enqueue) is queued again; a job that completed while its row is still open is replaced
 * (the worker checks the row, so this cannot send twice); a job that failed for good while
 * its row is still open is marked failed here.
 */
export async function reconcileOutbox(em: EntityManager, queue: RemindersQueue, practiceId?: string): Promise<ReconcileResult> {
  const knex = knexOf(em);
  const q = knex('reminder').whereIn('status', ['queued', 'sending']).select('id', 'practice_id', 'visit_id', 'step', 'round', 'origin', 'requested_by_id', 'queued_on');
  if (practiceId) q.where('practice_id', practiceId);
  const rows = (await q) as {
    id: string;
    practice_id: string;
    visit_id: string;
    step: ReminderStep;
    round: number;
    origin: 'scan' | 'desk';
    requested_by_id: string | null;
    queued_on: string;
  }[];
  const result: ReconcileResult = { open: rows.length, requeued: 0, finalized: 0 };
  const requeue: OutboxEntry[] = [];
  for (let i = 0; i < rows.length; i += 500) {
    const chunk = rows.slice(i, i + 500);
    const states = await Promise.all(chunk.map((r) => queue.getJobState(reminderJobId(r.visit_id, r.step, r.round))));
    for (let k = 0; k < chunk.length; k++) {
      const r = chunk[k]!;
      const state = states[k];
      const entry: OutboxEntry = {
        practiceId: r.practice_id,
        visitId: r.visit_id,
        step: r.step,
        round: r.round,
        origin: r.origin,
        requestedBy: r.requested_by_id,
        day: r.queued_on,
      };
      if (state === 'unknown') requeue.push(entry);
      else if (state === 'completed') {
        await queue.remove(reminderJobId(r.visit_id, r.step, r.round));
        requeue.push(entry);
      } else if (state === 'failed') {
        const job = await queue.getJob(reminderJobId(r.visit_id, r.step, r.round));
        if (await markReminderFailed(em, r.id, job?.failedReason || 'The last attempt failed.')) result.finalized += 1;
      }
    }
  }
  if (requeue.length) await enqueueOutbox(queue, requeue);
  result.requeued = requeue.length;
  return result;
}

/**
 * Sends a failed row again (the desk's "send now" after fixing an address): the old job is
 * removed first, then the row is reset to queued with its attempts cleared, then queued.
 * Returns false when the row is not failed.
 */
export async function retryFailedReminder(em: EntityManager, queue: RemindersQueue, row: OutboxRow, requestedBy: string | null): Promise<boolean> {
  await queue.remove(reminderJobId(row.visitId, row.step, row.round ?? 0));
  const knex = knexOf(em);
  const updated = await knex('reminder')
    .where({ id: row.id, status: 'failed' })
    .update({ status: 'queued', attempts: 0, failed_at: null, claim_expires_at: null, origin: 'desk', requested_by_id: requestedBy, updated_at: new Date() });
  if (!updated) return false;
  await enqueueOutbox(queue, [{ ...row, origin: 'desk', requestedBy }]);
  return true;
}

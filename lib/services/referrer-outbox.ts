import 'server-only';
import { randomUUID } from 'node:crypto';
import type { Redis } from 'ioredis';
import type { EntityManager } from '@mikro-orm/postgresql';
import { QUEUES, enqueueReferrerMail, openReferrerMailQueue, producerFor, referrerMailJobId, type ReferrerMailQueue } from '@/lib/queue';
import type { ReferrerMessageKind } from '@/entities';
import { env } from '@/lib/env';
import { fromAddress, outboxQueueOptions, reminderQueueSettings, type ReminderQueueSettings } from './recall-outbox';
import { knexOf } from './registry-common';

/**
 * The outbox of mail to referring dentists (entities/ReferrerMessage.ts): the reminder outbox's
 * rules (lib/services/recall-outbox.ts) for another kind of message. First the row (unique per kind
 * and subject: a second request for the same link or review inserts nothing), committed; then the
 * job under `referrerMailJobId(row)`. A row left `queued` without a job (Redis down at the time, a
 * crash between commit and enqueue) is queued again by `reconcileReferrerOutbox`, which the worker
 * runs with every recall scan. The worker (jobs/send-referrer-mail.ts) claims, sends and finishes
 * the row exactly as the reminder sender does.
 */

/** The queue, with the reminders' test overrides (QUEUE_PREFIX, REMINDER_ATTEMPTS, REMINDER_BACKOFF_MS). */
export function openReferrerQueue(
  connection: Redis,
  settings: ReminderQueueSettings = reminderQueueSettings(),
  options: { failFast?: boolean; log?: (m: string) => void } = {},
): ReferrerMailQueue {
  return openReferrerMailQueue(connection, outboxQueueOptions(settings, options));
}

/** The web process's producer (lib/queue's producerFor; fail-fast, like reminderProducer). */
export function referrerMailProducer(): Promise<ReferrerMailQueue> {
  return producerFor(QUEUES.referrerMail, {
    url: env.REDIS_URL,
    name: 'web-referrer-mail',
    open: (c) => openReferrerQueue(c, reminderQueueSettings(), { failFast: true }),
  });
}

/** The Message-ID of a referrer_message row: the same for every attempt. */
export function referrerMessageMailId(rowId: string, mailFrom: string = env.MAIL_FROM): string {
  const domain = fromAddress(mailFrom).split('@')[1] ?? 'lamina.invalid';
  return `<referrer-${rowId}@${domain}>`;
}

export interface ReferrerMessageEntry {
  practiceId: string;
  caseId: string;
  kind: ReferrerMessageKind;
  subjectId: string;
  referrerId: string | null;
  toAddress: string;
  requestedBy: string | null;
}

/**
 * Writes the outbox row for a message (nothing when the subject already has one of this kind).
 * Returns the row id and whether it is new.
 */
export async function insertReferrerMessage(em: EntityManager, e: ReferrerMessageEntry): Promise<{ id: string; created: boolean; status: string }> {
  const knex = knexOf(em);
  const now = new Date();
  const inserted = (await knex('referrer_message')
    .insert({
      id: randomUUID(),
      practice_id: e.practiceId,
      case_id: e.caseId,
      kind: e.kind,
      subject_id: e.subjectId,
      referrer_id: e.referrerId,
      to_address: e.toAddress,
      requested_by_id: e.requestedBy,
      status: 'queued',
      attempts: 0,
      queued_at: now,
      updated_at: now,
    })
    .onConflict(['kind', 'subject_id'])
    .ignore()
    .returning(['id'])) as { id: string }[];
  if (inserted[0]) return { id: inserted[0].id, created: true, status: 'queued' };
  const row = (await knex('referrer_message').where({ kind: e.kind, subject_id: e.subjectId }).first('id', 'status')) as { id: string; status: string };
  return { id: row.id, created: false, status: row.status };
}

/**
 * Queues the job of a committed row. Redis being down is not an error for the caller: the row stays
 * `queued` and the next scan's reconciliation queues it. Returns whether the job was queued now.
 */
export async function queueReferrerMessage(practiceId: string, rowId: string, queue?: ReferrerMailQueue): Promise<boolean> {
  try {
    await enqueueReferrerMail(queue ?? (await referrerMailProducer()), { practiceId, messageId: rowId });
    return true;
  } catch (e) {
    console.error('[referrer-mail] could not queue now; the next scan will', (e as Error).message);
    return false;
  }
}

/**
 * Gives a row up after its last attempt (status failed, an audit event). Only a row still queued
 * or sending changes. Returns true when it changed the row.
 */
export async function markReferrerMessageFailed(em: EntityManager, rowId: string, reason: string): Promise<boolean> {
  const knex = knexOf(em);
  const now = new Date();
  const [row] = (await knex('referrer_message')
    .where({ id: rowId })
    .whereIn('status', ['queued', 'sending'])
    .update({ status: 'failed', failed_at: now, claim_expires_at: null, last_error: reason.slice(0, 500), updated_at: now })
    .returning(['id', 'practice_id', 'case_id', 'kind'])) as { id: string; practice_id: string; case_id: string; kind: string }[];
  if (!row) return false;
  await knex('audit_event').insert({
    id: randomUUID(),
    at: now,
    practice_id: row.practice_id,
    action: 'referrer.mail_failed',
    entity_type: 'case',
    entity_id: row.case_id,
    detail: JSON.stringify({ message: row.id, kind: row.kind, reason: reason.slice(0, 200) }),
  });
  return true;
}

/**
 * Makes Redis agree with the outbox (as reconcileOutbox does for reminders): a row still queued or
 * sending whose job is gone is queued again; one whose job completed while the row is open is
 * replaced (the worker checks the row, so nothing is sent twice); one whose job failed for good is
 * marked failed.
 */
export async function reconcileReferrerOutbox(em: EntityManager, queue: ReferrerMailQueue): Promise<{ open: number; requeued: number; finalized: number }> {
  const rows = (await knexOf(em)('referrer_message').whereIn('status', ['queued', 'sending']).select('id', 'practice_id')) as { id: string; practice_id: string }[];
  const result = { open: rows.length, requeued: 0, finalized: 0 };
  for (const r of rows) {
    const jobId = referrerMailJobId(r.id);
    const state = await queue.getJobState(jobId);
    if (state === 'unknown' || state === 'completed') {
      if (state === 'completed') await queue.remove(jobId);
      await enqueueReferrerMail(queue, { practiceId: r.practice_id, messageId: r.id });
      result.requeued += 1;
    } else if (state === 'failed') {
      const job = await queue.getJob(jobId);
      if (await markReferrerMessageFailed(em, r.id, job?.failedReason || 'The last attempt failed.')) result.finalized += 1;
    }
  }
  return result;
}

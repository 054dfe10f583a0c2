/**
 * The exactly-once steps shared by every mail job that sends an outbox row (jobs/send-reminder.ts,
 * jobs/send-referrer-mail.ts; the rules are written out at the top of send-reminder.ts):
 *
 * - `claimOf`: a row found `sending` under a live claim belongs to another attempt (wait); one whose
 *   claim expired is the uncertain case (the earlier attempt may have been accepted by the relay).
 * - `sendOnce`: after an uncertain claim, ask the relay for the Message-ID when it can say (found →
 *   finish as `reconciled`, no second send; the check failing → the claim is put back expired and the
 *   attempt fails); then compose, send and finish, and on a failed send put the claim back: `queued`
 *   when nothing can have been accepted (no connection, or a refusal the relay stated: 4xx retried,
 *   5xx unrecoverable), `sending` with its claim expired when the relay did not answer.
 * - `releaseClaim`, `delayJob`: putting a claim back; waiting for another attempt's claim.
 *
 * Each job keeps its own claim statement (what it re-checks), its message and its finish statement.
 */
import { DelayedError, UnrecoverableError, type Job } from 'bullmq';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { SendMailOptions } from 'nodemailer';
import { knexOf } from '@/lib/services/registry-common';
import type { DeliveryCheck, ReminderTransport } from './mail';

/** The outbox tables whose rows a mail job claims (status, claim_expires_at, last_error, attempts). */
export type OutboxTable = 'reminder' | 'referrer_message';

/** How a send ended: first time, again after an uncertain claim, or found at the relay. */
export type SendHow = 'sent' | 'resent' | 'reconciled';

/**
 * For a row about to be claimed: wait `ms` while another attempt's claim is live; otherwise claim,
 * `uncertain` when the row is `sending` with its claim expired.
 */
export function claimOf(row: { status: string; claim_expires_at: string | null }, now: Date): { wait: number } | { uncertain: boolean } {
  if (row.status !== 'sending') return { uncertain: false };
  const expires = row.claim_expires_at ? new Date(row.claim_expires_at).getTime() : 0;
  if (expires > now.getTime()) return { wait: expires - now.getTime() + 50 };
  return { uncertain: true };
}

/** Puts a claim back after an attempt that did not send: `queued` when the relay said no, `sending` (expired) when unknown. */
export async function releaseClaim(em: EntityManager, table: OutboxTable, rowId: string, status: 'queued' | 'sending', error: string, now: Date) {
  await knexOf(em)(table)
    .where({ id: rowId, status: 'sending' })
    .update({ status, last_error: error.slice(0, 500), claim_expires_at: status === 'sending' ? now : null, updated_at: now });
}

/** Moves the job to delayed for `ms` (BullMQ), or fails the call when run outside a worker (tests). */
export async function delayJob(job: Job | undefined, token: string | undefined, ms: number, reason: string): Promise<never> {
  if (job && token) {
    await job.moveToDelayed(Date.now() + Math.max(ms, 100), token);
    throw new DelayedError(`Waiting ${Math.round(ms / 1000)} s: ${reason}.`);
  }
  throw new Error(`Not now: ${reason}.`);
}

/** What every outbox mail job is given by the worker (jobs/worker.ts) or a test. */
export interface MailJobContext {
  /** A fresh EntityManager fork per call. */
  em: () => EntityManager;
  transport: Pick<ReminderTransport, 'sendMail'>;
  /** Asks the relay whether it holds a Message-ID (local fake only); see jobs/send-reminder.ts. */
  deliveryCheck?: DeliveryCheck;
  appUrl: string;
  mailFrom: string;
  /** How long a claim is presumed alive, ms (the worker's lock duration). */
  leaseMs: number;
  now?: () => Date;
  log?: (message: string) => void;
}

export interface SendOnce {
  ctx: MailJobContext;
  /** The job's name, in log lines ('send-reminder'). */
  job: string;
  /** What the row sends, in error messages ('reminder', 'message'). */
  noun: string;
  table: OutboxTable;
  /** The claimed row. */
  rowId: string;
  to: string;
  messageId: string;
  uncertain: boolean;
  /** The time of the claim. */
  now: Date;
  /** The message (the same on every attempt); called only when it is to be sent. */
  compose: () => Promise<SendMailOptions>;
  /** sending → sent, in one statement. */
  finish: (how: SendHow, at: Date) => Promise<void>;
}

/** Sends a claimed row exactly once (see the top of this file); returns how, throws to retry or UnrecoverableError to stop. */
export async function sendOnce(s: SendOnce): Promise<SendHow> {
  const { ctx } = s;
  if (s.uncertain) {
    if (ctx.deliveryCheck) {
      let delivered: boolean;
      try {
        delivered = await ctx.deliveryCheck(s.messageId, s.to);
      } catch (e) {
        await releaseClaim(ctx.em(), s.table, s.rowId, 'sending', `Delivery check failed: ${(e as Error).message}`, s.now);
        throw new Error(`An earlier attempt may have sent this ${s.noun} and the mailbox cannot say: ${(e as Error).message}`);
      }
      if (delivered) {
        ctx.log?.(`[${s.job}] ${s.rowId}: an earlier attempt was accepted by the relay (Message-ID found); marked sent without sending again`);
        await s.finish('reconciled', s.now);
        return 'reconciled';
      }
    } else {
      ctx.log?.(`[${s.job}] ${s.rowId}: an earlier attempt did not finish; sending again under the same Message-ID`);
    }
  }

  const message = await s.compose();
  try {
    await ctx.transport.sendMail(message);
  } catch (e) {
    const err = e as Error & { responseCode?: number; code?: string };
    const text = `${err.message}`.slice(0, 400);
    if (err.code === 'ECONNECTION' || err.code === 'EDNS') {
      // No connection to the relay at all: nothing can have been accepted.
      await releaseClaim(ctx.em(), s.table, s.rowId, 'queued', `Could not reach the mail relay: ${text}`, new Date());
      throw err;
    }
    if (typeof err.responseCode === 'number') {
      await releaseClaim(ctx.em(), s.table, s.rowId, 'queued', `The mail relay answered ${err.responseCode}: ${text}`, new Date());
      if (err.responseCode >= 500) throw new UnrecoverableError(`The mail relay refused the message for good (${err.responseCode}): ${text}`);
      throw new Error(`The mail relay refused the message for now (${err.responseCode}): ${text}`);
    }
    // No answer from the relay: it may or may not hold the message. The next attempt asks or resends.
    await releaseClaim(ctx.em(), s.table, s.rowId, 'sending', `No answer from the mail relay: ${text}`, new Date());
    throw err;
  }
  const how = s.uncertain ? 'resent' : 'sent';
  await s.finish(how, new Date());
  return how;
}

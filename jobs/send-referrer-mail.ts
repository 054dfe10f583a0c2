/**
 * The `send-referrer-mail` job: one referrer_message row (entities/ReferrerMessage.ts), one e-mail
 * to a referring dentist — an upload link, or an outcome letter with its PDF.
 *
 * The same guarantees as jobs/send-reminder.ts, by the same three steps on the outbox row:
 *   1. claim   queued → sending (attempts + 1, claim lease): a compare-and-set, so of two attempts
 *              racing for one row exactly one wins; a row `sending` under a live claim waits
 *   2. SMTP    the message, under a Message-ID derived from the row id; the link's token and the
 *              letter are recomputed from the database, so every attempt sends the same message
 *   3. finish  sending → sent with the message id, and the audit event, in one statement
 * After a claim whose worker died (expired lease) the relay is asked for the Message-ID when it can
 * say (the local fake): found → marked sent without sending again. A refusal the relay states puts
 * the row back to queued (4xx: retried; 5xx: given up, the row failed and audited).
 */
import { UnrecoverableError, type Job } from 'bullmq';
import { randomUUID } from 'node:crypto';
import { JOBS, parseJobData } from '@/lib/queue';
import { initialsOf, uploadToken } from '@/lib/referrers/upload-token';
import { letterDate } from '@/lib/referrers/letter';
import { renderOutcomeLetter } from '@/lib/pdf/outcome-letter';
import { letterFacts } from '@/lib/services/referrer-letter';
import { referrerMessageMailId } from '@/lib/services/referrer-outbox';
import { knexOf, todayIn } from '@/lib/services/registry-common';
import { escapeHtml } from './mail';
import { claimOf, delayJob, type MailJobContext, releaseClaim, sendOnce } from './outbox-send';

export interface ReferrerMailContext extends MailJobContext {
  /** lib/referrers/upload-token.ts deriveUploadLinkSecret(NEXTAUTH_SECRET). */
  uploadKey: Buffer;
}

export type ReferrerMailOutcome = 'sent' | 'resent' | 'reconciled' | 'already_sent' | 'already_failed' | 'no_row';

interface Row {
  id: string;
  practice_id: string;
  case_id: string;
  kind: 'upload_link' | 'outcome_letter';
  subject_id: string;
  to_address: string;
  status: 'queued' | 'sending' | 'sent' | 'failed';
  claim_expires_at: string | null;
}

type Claim = { kind: 'done'; outcome: ReferrerMailOutcome; rowId?: string } | { kind: 'wait'; ms: number } | { kind: 'send'; row: Row; uncertain: boolean };

async function claim(ctx: ReferrerMailContext, practiceId: string, rowId: string, now: Date): Promise<Claim> {
  const knex = knexOf(ctx.em());
  for (let i = 0; i < 5; i++) {
    const row = (await knex('referrer_message')
      .where({ id: rowId, practice_id: practiceId })
      .first('id', 'practice_id', 'case_id', 'kind', 'subject_id', 'to_address', 'status', 'claim_expires_at')) as Row | undefined;
    if (!row) return { kind: 'done', outcome: 'no_row' };
    if (row.status === 'sent') return { kind: 'done', outcome: 'already_sent', rowId: row.id };
    if (row.status === 'failed') return { kind: 'done', outcome: 'already_failed', rowId: row.id };
    const lease = claimOf(row, now);
    if ('wait' in lease) return { kind: 'wait', ms: lease.wait };
    const { uncertain } = lease;
    const claimed = await knex('referrer_message')
      .where({ id: row.id, status: row.status })
      .whereRaw('claim_expires_at is not distinct from ?', [row.claim_expires_at])
      .update({ status: 'sending', attempts: knex.raw('attempts + 1'), claim_expires_at: new Date(now.getTime() + ctx.leaseMs), updated_at: now });
    if (claimed) return { kind: 'send', row, uncertain };
  }
  throw new Error('The outbox row kept changing while it was being claimed; trying again later.');
}

async function finish(ctx: ReferrerMailContext, row: Row, messageId: string, now: Date, how: ReferrerMailOutcome) {
  await knexOf(ctx.em()).raw(
    `with r as (
       update referrer_message set status = 'sent', message_id = ?, sent_at = ?, claim_expires_at = null, last_error = null, updated_at = ?
        where id = ? and status = 'sending' returning id, practice_id, case_id, kind, subject_id)
     insert into audit_event (id, "at", practice_id, action, entity_type, entity_id, detail)
     select ?, ?, r.practice_id, 'referrer.mail_sent', 'case', r.case_id::text, jsonb_build_object('message', r.id, 'kind', r.kind, 'subject', r.subject_id, 'how', ?::text) from r`,
    [messageId, now, now, row.id, randomUUID(), now, how],
  );
}

interface Composed {
  subject: string;
  text: string;
  html: string;
  attachments?: { filename: string; content: Buffer; contentType: string }[];
}

const para = (lines: string[]) => lines.map((l) => `<p>${escapeHtml(l)}</p>`).join('');

async function composeUploadLink(ctx: ReferrerMailContext, row: Row): Promise<Composed> {
  const knex = knexOf(ctx.em());
  const l = (await knex('referrer_upload_link as l')
    .join('treatment_case as c', 'c.id', 'l.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .join('practice as pr', 'pr.id', 'l.practice_id')
    .leftJoin('referrer as rf', 'rf.id', 'l.referrer_id')
    .where({ 'l.id': row.subject_id, 'l.practice_id': row.practice_id })
    .first('l.id', 'l.expires_at', 'c.tooth', 'p.given_name', 'p.family_name', 'pr.name as practice_name', 'pr.time_zone', 'rf.name as referrer_name')) as
    | { id: string; expires_at: Date; tooth: number; given_name: string; family_name: string; practice_name: string; time_zone: string; referrer_name: string | null }
    | undefined;
  if (!l) throw new UnrecoverableError('The upload link of this message no longer exists.');
  const url = new URL(`/upload/${uploadToken(l.id, ctx.uploadKey)}`, ctx.appUrl).toString();
  const initials = initialsOf(l.given_name, l.family_name);
  const until = letterDate(todayIn(l.time_zone, new Date(l.expires_at)));
  const lines = [
    `Dear ${l.referrer_name ?? 'colleague'},`,
    `${l.practice_name} asks you to send the follow-up radiograph of tooth ${l.tooth} (FDI) for your patient ${initials}, taken at your practice.`,
    `Upload it here (no account needed): ${url}`,
    `The link works for one upload (one or several files: PNG, JPEG or DICOM) until ${until}.`,
    `With thanks, ${l.practice_name}`,
  ];
  return {
    subject: `Follow-up film for tooth ${l.tooth} (${initials}): upload link from ${l.practice_name}`,
    text: lines.join('\n\n'),
    html: para(lines.slice(0, 2)) + `<p><a href="${escapeHtml(url)}">Upload the film</a></p>` + para(lines.slice(3)),
  };
}

async function composeLetter(ctx: ReferrerMailContext, row: Row, now: Date): Promise<Composed> {
  const facts = await letterFacts(ctx.em(), row.practice_id, row.subject_id, now);
  const pdf = await renderOutcomeLetter(facts);
  const lines = [
    `Dear ${facts.referrerName},`,
    `Please find attached the outcome of the follow-up review of tooth ${facts.tooth} (FDI), reviewed on ${letterDate(facts.review.date)}.`,
    `With kind regards, ${facts.clinicianName}, ${facts.practiceName}`,
  ];
  return {
    subject: `Outcome of the follow-up review of tooth ${facts.tooth} from ${facts.practiceName}`,
    text: lines.join('\n\n'),
    html: para(lines),
    attachments: [{ filename: `outcome-letter-tooth-${facts.tooth}.pdf`, content: pdf, contentType: 'application/pdf' }],
  };
}

/** The job handler (also called directly by tests). */
export async function processSendReferrerMail(
  ctx: ReferrerMailContext,
  job: Pick<Job, 'data'> & Partial<Job>,
  token?: string,
): Promise<{ outcome: ReferrerMailOutcome; rowId?: string }> {
  const data = parseJobData(JOBS.sendReferrerMail, job.data);
  const now = ctx.now?.() ?? new Date();
  const c = await claim(ctx, data.practiceId, data.messageId, now);
  if (c.kind === 'done') return { outcome: c.outcome, rowId: c.rowId };
  if (c.kind === 'wait') return delayJob(job as Job, token, c.ms, 'another attempt is sending it');
  const { row, uncertain } = c;
  const messageId = referrerMessageMailId(row.id, ctx.mailFrom);
  const how = await sendOnce({
    ctx,
    job: 'send-referrer-mail',
    noun: 'message',
    table: 'referrer_message',
    rowId: row.id,
    to: row.to_address,
    messageId,
    uncertain,
    now,
    compose: async () => {
      try {
        const message = row.kind === 'upload_link' ? await composeUploadLink(ctx, row) : await composeLetter(ctx, row, now);
        return { from: ctx.mailFrom, to: row.to_address, messageId, ...message };
      } catch (e) {
        await releaseClaim(ctx.em(), 'referrer_message', row.id, 'queued', `Could not compose the message: ${(e as Error).message}`, new Date());
        throw e;
      }
    },
    finish: (result, at) => finish(ctx, row, messageId, at, result),
  });
  return { outcome: how, rowId: row.id };
}

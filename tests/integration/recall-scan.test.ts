import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import type { Redis } from 'ioredis';
import { connectionForWorker, type RemindersQueue } from '@/lib/queue';
import { reminderJobId } from '@/lib/recall/reminders';
import { deriveLinkSecret } from '@/lib/recall/reply-token';
import { renderTemplate } from '@/lib/mail/mailer';
import { ReminderEmail, type ReminderEmailProps } from '@/lib/mail/templates/ReminderEmail';
import { addDaysTo } from '@/lib/registry/calendar-date';
import { env } from '@/lib/env';
import { insertOutboxRows, openReminderQueue, reminderMessageId, reminderQueueSettings } from '@/lib/services/recall-outbox';
import { todayIn } from '@/lib/services/registry-common';
import { runRecallScan } from '@/jobs/recall-scan';
import { processSendReminder, type SendContext } from '@/jobs/send-reminder';
import { createReminderTransport, mailboxDeliveryCheck, renderReminder } from '@/jobs/mail';
import { startWorker } from '@/jobs/worker';
import { makeRegistryPractice, openServices, resetData } from '../support/db';
import { clearMailbox, mailbox, refuseSmtp, seedVisits, waitFor } from './recall-fixtures';

/**
 * The recall scan and the send-reminder handler on the real PostgreSQL, Redis and SMTP fake:
 * which visits the scan queues, that a second scan queues nothing, consent, the message itself,
 * the outbox claim, and what happens after the last failed attempt.
 */
const services = await openServices();
const prefix = `lamina-test-scan-${randomBytes(3).toString('hex')}`;
let connection: Redis;
let queue: RemindersQueue;
const transport = createReminderTransport(process.env.SMTP_URL!, { maxConnections: 2, timeoutMs: 5_000 });
const logs: string[] = [];
const ctx = (over: Partial<SendContext> = {}): SendContext => ({
  em: () => services.em(),
  transport,
  deliveryCheck: mailboxDeliveryCheck(process.env.MAILBOX_URL!, process.env.MAILBOX_SECRET),
  linkSecret: deriveLinkSecret(env.NEXTAUTH_SECRET),
  appUrl: env.APP_URL,
  mailFrom: env.MAIL_FROM,
  leaseMs: 30_000,
  log: (m) => logs.push(m),
  ...over,
});
const knex = () => services.em().getKnex();
const today = todayIn('Europe/London');

beforeAll(async () => {
  connection = connectionForWorker(process.env.REDIS_URL!, { name: 'test-scan' });
  queue = openReminderQueue(connection, reminderQueueSettings({ QUEUE_PREFIX: prefix }));
});
afterAll(async () => {
  await queue.obliterate({ force: true });
  await queue.close();
  connection.disconnect();
  transport.close();
  await services.close();
});
beforeEach(async () => {
  await resetData(services.orm, services.redis);
  await queue.obliterate({ force: true });
  await clearMailbox();
  logs.length = 0;
});

async function world() {
  const p = await makeRegistryPractice(services.em(), `scan${randomBytes(3).toString('hex')}`);
  return { ...p, practiceId: p.practice.id, operatorId: p.clinician.userId };
}

async function jobIds(): Promise<string[]> {
  const jobs = await queue.getJobs(['waiting', 'delayed', 'active', 'completed', 'failed', 'prioritized']);
  return jobs.map((j) => j.id!).sort();
}

describe('recall scan', () => {
  it('queues exactly the visits entering a step today, once each', async () => {
    const w = await world();
    const v = await seedVisits(services.em(), w.practiceId, w.operatorId, today, [
      { dueIn: 10 }, // 0 invitation (due − 21 days has passed)
      { dueIn: 30 }, // 1 nothing yet (invitation on day +9)
      { dueIn: 5, recallContact: false }, // 2 no consent
      { dueIn: 5, channel: 'phone' }, // 3 consent for phone, not e-mail
      { dueIn: 9, status: 'invited' }, // 4 invited 12 days ago → second invitation
      { dueIn: 5, status: 'confirmed' }, // 5 confirmed: nothing
      { dueIn: -20 }, // 6 due date passed, window open, never invited → invitation
      { dueIn: 10, patientArchived: true }, // 7 archived patient
      { dueIn: -200, status: 'missed', windowAfter: 120 }, // 8 missed
      { dueIn: 10, email: null }, // 9 no address
      { dueIn: -20, status: 'invited' }, // 10 invited 12 days ago, last notice due (due + 14 ≤ today) → last notice
    ]);
    // The invitations of visits 4 and 10 went out 12 days ago.
    const rows = await insertOutboxRows(services.em(), [4, 10].map((i) => ({ practiceId: w.practiceId, visitId: v[i]!.visitId, step: 'invitation' as const, origin: 'scan' as const, day: addDaysTo(today, -12) })));
    await knex()('reminder').whereIn('id', rows.map((r) => r.id)).update({ status: 'sent', sent_on: addDaysTo(today, -12), sent_at: new Date(Date.now() - 12 * 86_400_000) });

    const first = await runRecallScan({ em: () => services.em(), queue }, { practiceId: w.practiceId });
    expect(first.queued).toBe(4);
    const queued = (await knex()('reminder').where({ status: 'queued' }).select('visit_id', 'step')) as { visit_id: string; step: string }[];
    const expected = [
      { visit_id: v[0]!.visitId, step: 'invitation' },
      { visit_id: v[4]!.visitId, step: 'second_invitation' },
      { visit_id: v[6]!.visitId, step: 'invitation' },
      { visit_id: v[10]!.visitId, step: 'last_notice' },
    ];
    const key = (r: { visit_id: string; step: string }) => `${r.visit_id}/${r.step}`;
    expect(queued.map(key).sort()).toEqual(expected.map(key).sort());
    expect(await jobIds()).toEqual(expected.map((e) => reminderJobId(e.visit_id, e.step as 'invitation')).sort());

    // A second scan (and a third on a later hour of the same day) queues nothing new.
    const second = await runRecallScan({ em: () => services.em(), queue }, { practiceId: w.practiceId });
    const third = await runRecallScan({ em: () => services.em(), queue }, {});
    expect(second.queued).toBe(0);
    expect(third.queued).toBe(0);
    expect(await knex()('reminder').count('* as n').first()).toMatchObject({ n: '6' });
    expect((await jobIds()).length).toBe(4);
  });

  it('re-queues outbox rows whose job has gone (Redis lost it), and nothing else', async () => {
    const w = await world();
    await seedVisits(services.em(), w.practiceId, w.operatorId, today, [{ dueIn: 10 }, { dueIn: 12 }, { dueIn: 15 }]);
    await runRecallScan({ em: () => services.em(), queue }, {});
    expect((await jobIds()).length).toBe(3);
    await queue.obliterate({ force: true }); // what a Redis restart without persistence does
    expect(await jobIds()).toEqual([]);
    const again = await runRecallScan({ em: () => services.em(), queue }, {});
    expect(again.queued).toBe(0);
    expect(again.reconcile).toMatchObject({ open: 3, requeued: 3 });
    expect((await jobIds()).length).toBe(3);
    const third = await runRecallScan({ em: () => services.em(), queue }, {});
    expect(third.reconcile).toMatchObject({ open: 3, requeued: 0 });
  });

  it('marks past-due open visits missed and closes a missed visit after the unanswered attempts', async () => {
    const w = await world();
    const v = await seedVisits(services.em(), w.practiceId, w.operatorId, today, [
      { dueIn: -150, status: 'invited', windowAfter: 120 }, // window ended 30 days ago → missed
      { dueIn: -150, status: 'missed', windowAfter: 120 }, // missed with 3 sent, unanswered → closed
      { dueIn: 400, milestone: 24, sameCaseAs: 1 }, // the same case's later visit → closed with it
      { dueIn: -150, status: 'missed', windowAfter: 120 }, // missed, 3 sent but a reply after the last → stays
    ]);
    for (const i of [1, 3]) {
      const rows = await insertOutboxRows(
        services.em(),
        (['invitation', 'second_invitation', 'last_notice'] as const).map((step, k) => ({ practiceId: w.practiceId, visitId: v[i]!.visitId, step, origin: 'scan' as const, day: addDaysTo(today, -170 + 10 * k) })),
      );
      for (const [k, r] of rows.entries()) await knex()('reminder').where({ id: r.id }).update({ status: 'sent', sent_on: addDaysTo(today, -170 + 10 * k) });
    }
    await knex()('contact_log_entry').insert({ id: crypto.randomUUID(), practice_id: w.practiceId, visit_id: v[3]!.visitId, at: new Date(Date.now() - 100 * 86_400_000), kind: 'reply', by: 'patient', answer: 'another_time' });

    const scan = await runRecallScan({ em: () => services.em(), queue }, { practiceId: w.practiceId });
    expect(scan.practices[0]).toMatchObject({ markedMissed: 1, closedLost: 1 });
    const statuses = Object.fromEntries(((await knex()('recall_visit').select('id', 'status', 'lost_to_follow_up')) as { id: string; status: string }[]).map((r) => [r.id, r.status]));
    expect(statuses[v[0]!.visitId]).toBe('missed');
    expect(statuses[v[1]!.visitId]).toBe('closed');
    expect(statuses[v[2]!.visitId]).toBe('closed');
    expect(statuses[v[3]!.visitId]).toBe('missed');
    expect(await knex()('audit_event').where({ action: 'visit.closed_lost' }).count('* as n').first()).toMatchObject({ n: '1' });
    expect(await knex()('contact_log_entry').where({ kind: 'status_change', to_status: 'missed', by: 'system' }).count('* as n').first()).toMatchObject({ n: '1' });
  });
});

describe('send-reminder', () => {
  async function queuedReminder(spec: Parameters<typeof seedVisits>[4][number] = { dueIn: 10 }) {
    const w = await world();
    const [visit] = await seedVisits(services.em(), w.practiceId, w.operatorId, today, [spec]);
    const [row] = await insertOutboxRows(services.em(), [{ practiceId: w.practiceId, visitId: visit!.visitId, step: 'invitation', origin: 'scan', day: today }]);
    const job = { data: { practiceId: w.practiceId, visitId: visit!.visitId, step: 'invitation', origin: 'scan', day: today } };
    return { w, visit: visit!, row: row!, job };
  }

  it('sends the invitation once: message, headers, outbox, contact log, visit invited', async () => {
    const { visit, row, job } = await queuedReminder();
    expect(await processSendReminder(ctx(), job)).toEqual({ outcome: 'sent', reminderId: row.id });
    const [m, ...more] = await mailbox(visit.email!);
    expect(more).toEqual([]);
    expect(m!.messageId).toBe(reminderMessageId(row.id));
    expect(m!.subject).toMatch(/^Your follow-up review at Practice scan\w+ is due in \w+ \d{4}$/);
    expect(m!.listUnsubscribe).toMatch(/^<http:\/\/[^>]+\/api\/unsubscribe\/[A-Za-z0-9_-]+\.[A-Za-z0-9_-]+>$/);
    expect(m!.listUnsubscribePost).toBe('List-Unsubscribe=One-Click');
    expect(m!.text).toContain('Dear Wren0,');
    expect(m!.text).toMatch(/\/r\/[A-Za-z0-9_-]+\.[A-Za-z0-9_-]+\?answer=confirmed/);
    expect(m!.attachments).toEqual([]);
    // No clinical detail in the message (the case is a lower molar, tooth 36, necrotic pulp).
    for (const part of [m!.subject, m!.text, m!.html ?? '']) expect(part).not.toMatch(/tooth 36|molar|necrosis|periodontitis|diagnos/i);

    const saved = await knex()('reminder').where({ id: row.id }).first();
    expect(saved).toMatchObject({ status: 'sent', attempts: 1, message_id: reminderMessageId(row.id), sent_on: today });
    expect(await knex()('recall_visit').where({ id: visit.visitId }).first('status')).toEqual({ status: 'invited' });
    const log = (await knex()('contact_log_entry').where({ visit_id: visit.visitId }).orderBy('at').select('kind', 'by', 'to_status')) as object[];
    expect(log).toEqual([
      { kind: 'message_sent', by: 'system', to_status: null },
      { kind: 'status_change', by: 'system', to_status: 'invited' },
    ]);
    expect(await knex()('audit_event').where({ action: 'recall.reminder_sent', entity_id: visit.visitId }).count('* as n').first()).toMatchObject({ n: '1' });

    // The same job again (a duplicate, a retry, a re-queue after a Redis restart): nothing is sent.
    expect(await processSendReminder(ctx(), job)).toEqual({ outcome: 'already_sent', reminderId: row.id });
    expect((await mailbox(visit.email!)).length).toBe(1);
  });

  it('no consent, no message: the row is skipped and the job unrecoverable', async () => {
    const { visit, row, job } = await queuedReminder({ dueIn: 10 });
    // Consent withdrawn after the reminder was queued.
    await knex()('patient').where({ id: visit.patientId }).update({ recall_contact: false });
    await expect(processSendReminder(ctx(), job)).rejects.toMatchObject({ name: 'UnrecoverableError' });
    expect(await knex()('reminder').where({ id: row.id }).first('status', 'attempts')).toEqual({ status: 'skipped', attempts: 0 });
    expect(await mailbox(visit.email!)).toEqual([]);
    expect(await knex()('recall_visit').where({ id: visit.visitId }).first('status')).toEqual({ status: 'planned' });
  });

  it('a visit that no longer needs contact is skipped without a message', async () => {
    const { visit, row, job } = await queuedReminder({ dueIn: 10 });
    await knex()('recall_visit').where({ id: visit.visitId }).update({ status: 'confirmed' });
    expect(await processSendReminder(ctx(), job)).toMatchObject({ outcome: 'no_longer_needed' });
    expect(await knex()('reminder').where({ id: row.id }).first('status')).toEqual({ status: 'skipped' });
    expect(await mailbox(visit.email!)).toEqual([]);
  });

  it('a proposed appointment goes with the message as a calendar file', async () => {
    const { visit, job } = await queuedReminder({ dueIn: 10 });
    const start = new Date(`${addDaysTo(today, 12)}T09:30:00Z`);
    await knex()('recall_visit').where({ id: visit.visitId }).update({ proposed_start: start });
    await processSendReminder(ctx(), job);
    const [m] = await mailbox(visit.email!);
    expect(m!.attachments).toHaveLength(1);
    expect(m!.attachments[0]!.contentType).toMatch(/^text\/calendar/);
    const ics = Buffer.from(m!.attachments[0]!.content, 'base64').toString('utf8');
    expect(ics).toContain('METHOD:PUBLISH');
    expect(ics).toContain(`DTSTART:${addDaysTo(today, 12).replaceAll('-', '')}T093000Z`);
    expect(m!.text).toContain('We have set aside a time for you');
  });

  it('an overdue visit invited with nothing sent gets the invitation worded for overdue visits, with the practice’s address, phone and e-mail', async () => {
    const w = await world();
    await knex()('practice').where({ id: w.practiceId }).update({ address: '3 Saltmarsh Lane, Ellery Bay', phone: '020 7946 0101', contact_email: 'desk@saltmarsh.invalid' });
    const [visit] = await seedVisits(services.em(), w.practiceId, w.operatorId, today, [{ dueIn: -20, status: 'invited' }]);
    await runRecallScan({ em: () => services.em(), queue }, { practiceId: w.practiceId });
    expect(await knex()('reminder').where({ visit_id: visit!.visitId }).select('step', 'round')).toEqual([{ step: 'invitation', round: 0 }]);
    await processSendReminder(ctx(), { data: { practiceId: w.practiceId, visitId: visit!.visitId, step: 'invitation', origin: 'scan', day: today } });
    const [m] = await mailbox(visit!.email!);
    expect(m!.subject).toMatch(/^Time to arrange your follow-up review at /);
    expect(m!.text).toMatch(/was due in \w+ \d{4}, and we would like to arrange it with you/);
    expect(m!.text).not.toMatch(/nearly time|last reminder/i);
    expect(m!.text).toContain('Questions? Please call 020 7946 0101 or write to desk@saltmarsh.invalid.');
    expect(m!.text).toContain('3 Saltmarsh Lane, Ellery Bay.');
  });

  it('a proposal: its own words and calendar file with the practice’s details; a reminder of the earlier round is skipped', async () => {
    const w = await world();
    await knex()('practice').where({ id: w.practiceId }).update({ address: '3 Saltmarsh Lane, Ellery Bay', phone: '020 7946 0101', contact_email: 'desk@saltmarsh.invalid' });
    const [visit] = await seedVisits(services.em(), w.practiceId, w.operatorId, today, [{ dueIn: 10, status: 'invited' }]);
    // A second invitation of round 0 is still waiting when the desk proposes a time (round 1).
    const [old] = await insertOutboxRows(services.em(), [{ practiceId: w.practiceId, visitId: visit!.visitId, step: 'second_invitation', origin: 'scan', day: today }]);
    const start = new Date(`${addDaysTo(today, 8)}T10:15:00Z`);
    await knex()('recall_visit').where({ id: visit!.visitId }).update({ proposed_start: start, reminder_round: 1 });
    const [proposal] = await insertOutboxRows(services.em(), [{ practiceId: w.practiceId, visitId: visit!.visitId, step: 'proposal', round: 1, origin: 'desk', day: today }]);
    expect(proposal).toBeTruthy();
    const stale = await processSendReminder(ctx(), { data: { practiceId: w.practiceId, visitId: visit!.visitId, step: 'second_invitation', origin: 'scan', day: today } });
    expect(stale).toEqual({ outcome: 'no_longer_needed', reminderId: old!.id });
    const sentNow = await processSendReminder(ctx(), { data: { practiceId: w.practiceId, visitId: visit!.visitId, step: 'proposal', round: 1, origin: 'desk', day: today } });
    expect(sentNow).toEqual({ outcome: 'sent', reminderId: proposal!.id });
    const messages = await mailbox(visit!.email!);
    expect(messages).toHaveLength(1);
    const m = messages[0]!;
    expect(m.subject).toMatch(/^A time for your follow-up review at /);
    expect(m.text).toContain('We would like to offer you a time');
    expect(m.text).not.toMatch(/not heard from you/);
    const ics = Buffer.from(m.attachments[0]!.content, 'base64').toString('utf8').replace(/\r\n[ \t]/g, '');
    expect(ics).toContain('LOCATION:3 Saltmarsh Lane\\, Ellery Bay');
    expect(ics).toContain('020 7946 0101');
    expect(ics).toMatch(/ORGANIZER;CN=[^:]*:mailto:desk@saltmarsh\.invalid/i);
    expect(await knex()('reminder').where({ id: old!.id }).first('status')).toEqual({ status: 'skipped' });
  });

  it('an interrupted claim: asks the mailbox first; resends under the same Message-ID only when it was not accepted', async () => {
    const a = await queuedReminder({ dueIn: 10 });
    const b = await queuedReminder({ dueIn: 11 });
    // Both died mid-send: b's message had reached the relay, a's had not.
    const expired = new Date(Date.now() - 1000);
    await knex()('reminder').whereIn('id', [a.row.id, b.row.id]).update({ status: 'sending', attempts: 1, claim_expires_at: expired });
    await transport.sendMail({ from: 'x@lamina.invalid', to: b.visit.email!, subject: 'earlier attempt', text: 'x', messageId: reminderMessageId(b.row.id) });

    expect(await processSendReminder(ctx(), b.job)).toMatchObject({ outcome: 'reconciled' });
    expect((await mailbox(b.visit.email!)).length).toBe(1);
    expect(await processSendReminder(ctx(), a.job)).toMatchObject({ outcome: 'resent' });
    expect((await mailbox(a.visit.email!)).map((m) => m.messageId)).toEqual([reminderMessageId(a.row.id)]);
    for (const r of [a.row, b.row]) expect(await knex()('reminder').where({ id: r.id }).first('status')).toEqual({ status: 'sent' });

    // Without a delivery check (a plain relay) the same message goes again, under the same Message-ID.
    const c = await queuedReminder({ dueIn: 12 });
    await processSendReminder(ctx(), c.job);
    await knex()('reminder').where({ id: c.row.id }).update({ status: 'sending', claim_expires_at: expired });
    expect(await processSendReminder(ctx({ deliveryCheck: undefined }), c.job)).toMatchObject({ outcome: 'resent' });
    const sent = await mailbox(c.visit.email!);
    expect(sent.map((m) => m.messageId)).toEqual([reminderMessageId(c.row.id), reminderMessageId(c.row.id)]);
    expect(sent[0]!.text).toBe(sent[1]!.text);

    // A claim that is still running is left to its owner.
    const d = await queuedReminder({ dueIn: 13 });
    await knex()('reminder').where({ id: d.row.id }).update({ status: 'sending', claim_expires_at: new Date(Date.now() + 60_000) });
    await expect(processSendReminder(ctx(), d.job)).rejects.toThrow(/another attempt is sending it/);
    expect(await mailbox(d.visit.email!)).toEqual([]);
  });

  it('after the last failed attempt the row is failed and the visit flagged for the coordinator', async () => {
    const { visit, row } = await queuedReminder({ dueIn: 10 });
    const saved = { ...process.env };
    Object.assign(process.env, { QUEUE_PREFIX: prefix, REMINDER_ATTEMPTS: '3', REMINDER_BACKOFF_MS: '50' });
    await refuseSmtp(3);
    const handle = await startWorker({ concurrency: 2, lockMs: 5_000, maxStalled: 3, smtpTimeoutMs: 3_000, scanPattern: '0 * * * *', scanOnStart: true }, services.orm);
    try {
      const failed = await waitFor('the row to fail', async () => (await knex()('reminder').where({ id: row.id }).first())?.status === 'failed', 20_000);
      expect(failed).toBe(true);
      const r = await knex()('reminder').where({ id: row.id }).first();
      expect(r).toMatchObject({ status: 'failed', attempts: 3 });
      expect(r.last_error).toMatch(/451/);
      expect((await knex()('recall_visit').where({ id: visit.visitId }).first()).delivery_failed_at).not.toBeNull();
      expect(await knex()('contact_log_entry').where({ visit_id: visit.visitId, kind: 'delivery_failed' }).count('* as n').first()).toMatchObject({ n: '1' });
      expect(await mailbox(visit.email!)).toEqual([]);
    } finally {
      await handle.close();
      await refuseSmtp(0);
      process.env = saved;
    }
  });
});

describe('rendering', () => {
  it('the memoised renderer gives exactly what a direct render gives, awkward names included', async () => {
    const base: ReminderEmailProps = {
      wording: 'second_invitation',
      firstName: 'x',
      practiceName: 'Harbour & Quay <Endo> "Care"',
      dueDate: '2026-03-02',
      links: { confirm: 'http://a.test/r/t.s?answer=confirmed', reschedule: 'http://a.test/r/t.s?answer=another_time', decline: 'http://a.test/r/t.s?answer=declined', unsubscribe: 'http://a.test/u/t.s' },
      contact: {},
    };
    for (const firstName of ['Wren', `O'Neil & <b>Sons</b>`, 'Zoë "Z" Ångström', 'A&amp;B']) {
      const props = { ...base, firstName, links: { ...base.links, confirm: `${base.links.confirm}&x=${encodeURIComponent(firstName)}` } };
      expect(await renderReminder(props)).toEqual(await renderTemplate(ReminderEmail(props)));
    }
  });
});

describe('send-reminder, batched (jobs/coalesce.ts)', () => {
  it('two workers racing over the same rows, each job given to one of them twice: every row is claimed and sent once, one status change per visit', async () => {
    const w = await world();
    const visits = await seedVisits(services.em(), w.practiceId, w.operatorId, today, Array.from({ length: 30 }, (_, i) => ({ dueIn: 7 + (i % 14) })), 'b');
    // Five visits have two rows (invitation and second invitation): their finishes must not share a statement.
    const entries = visits.flatMap((v, i) =>
      (i < 5 ? (['invitation', 'second_invitation'] as const) : (['invitation'] as const)).map((step) => ({ practiceId: w.practiceId, visitId: v.visitId, step, origin: 'scan' as const, day: today })),
    );
    await insertOutboxRows(services.em(), entries);
    const sent: string[] = [];
    const counting: SendContext['transport'] = {
      sendMail: async (m: Parameters<SendContext['transport']['sendMail']>[0]) => {
        sent.push(String(m.messageId));
        return transport.sendMail(m);
      },
    } as SendContext['transport'];
    const a = ctx({ transport: counting });
    const b = ctx({ transport: counting });
    const jobs = entries.map((data) => ({ data }));
    // Worker a holds every job twice (a duplicate job in one process), worker b once; all at once.
    const results = await Promise.allSettled([...jobs, ...jobs].map((j) => processSendReminder(a, j)).concat(jobs.map((j) => processSendReminder(b, j))));
    const outcomes = results.map((r) => (r.status === 'fulfilled' ? r.value.outcome : (r.reason as Error).message));
    expect(outcomes.filter((o) => o === 'sent').length).toBe(entries.length);
    expect(outcomes.every((o) => o === 'sent' || o === 'already_sent' || /another attempt is sending it/.test(o))).toBe(true);
    expect({ sends: sent.length, distinct: new Set(sent).size }).toEqual({ sends: entries.length, distinct: entries.length });
    const rows = (await knex()('reminder').select('status', 'attempts', 'message_id')) as { status: string; attempts: number; message_id: string }[];
    expect(rows.every((r) => r.status === 'sent' && r.attempts === 1)).toBe(true);
    expect(new Set(rows.map((r) => r.message_id))).toEqual(new Set(sent));
    expect(await knex()('contact_log_entry').where({ kind: 'message_sent' }).count('* as n').first()).toMatchObject({ n: String(entries.length) });
    expect(await knex()('contact_log_entry').where({ kind: 'status_change', to_status: 'invited' }).count('* as n').first()).toMatchObject({ n: String(visits.length) });
    expect(await knex()('audit_event').where({ action: 'recall.reminder_sent' }).count('* as n').first()).toMatchObject({ n: String(entries.length) });
    expect((await mailbox()).length).toBe(entries.length);
  }, 120_000);
});

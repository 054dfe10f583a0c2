import { randomBytes } from 'node:crypto';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { env } from '@/lib/env';
import { getOrm } from '@/lib/db';
import { deriveLinkSecret, issueReplyToken } from '@/lib/recall/reply-token';
import { insertOutboxRows } from '@/lib/services/recall-outbox';
import { answerReply, lookupReply, lookupUnsubscribe, unsubscribe } from '@/lib/services/recall-replies';
import { todayIn } from '@/lib/services/registry-common';
import { ValidationError } from '@/lib/services/errors';
import { updatePatient } from '@/lib/services/patients';
import { processSendReminder, type SendContext } from '@/jobs/send-reminder';
import { createReminderTransport, mailboxDeliveryCheck } from '@/jobs/mail';
import { POST as oneClick, GET as unsubscribeGet } from '@/app/api/unsubscribe/[token]/route';
import { makeRegistryPractice, openServices, resetData } from '../support/db';
import { clearMailbox, mailbox, seedVisits, type VisitSpec } from './recall-fixtures';

/**
 * Patients' answers through the links of a real reminder (sent to the SMTP fake and read back):
 * a link confirms once; a second use, a tampered token and an expired one are refused and change
 * nothing; opening a link changes nothing; unsubscribing withdraws the consent (page and one-click).
 */
const services = await openServices();
const transport = createReminderTransport(process.env.SMTP_URL!, { maxConnections: 1, timeoutMs: 5_000 });
const secret = deriveLinkSecret(env.NEXTAUTH_SECRET);
const ctx: SendContext = {
  em: () => services.em(),
  transport,
  deliveryCheck: mailboxDeliveryCheck(process.env.MAILBOX_URL!, process.env.MAILBOX_SECRET),
  linkSecret: secret,
  appUrl: env.APP_URL,
  mailFrom: env.MAIL_FROM,
  leaseMs: 30_000,
};
const knex = () => services.em().getKnex();
const today = todayIn('Europe/London');
const origin = { ip: '127.0.0.9', userAgent: 'vitest' };

afterAll(async () => {
  transport.close();
  await services.close();
  // The route handler's ORM (lib/db, cached on globalThis): closed and forgotten, so a later file starts afresh.
  await (await getOrm()).close(true);
  delete (globalThis as { __laminaOrm?: unknown }).__laminaOrm;
});
beforeEach(async () => {
  await resetData(services.orm, services.redis);
  await clearMailbox();
});

/** A visit whose invitation was really sent; its reply and unsubscribe tokens read from the message. */
async function invited(specs: VisitSpec[] = [{ dueIn: 10 }]) {
  const p = await makeRegistryPractice(services.em(), `reply${randomBytes(3).toString('hex')}`);
  const visits = await seedVisits(services.em(), p.practice.id, p.clinician.userId, today, specs);
  const v = visits[0]!;
  const [row] = await insertOutboxRows(services.em(), [{ practiceId: p.practice.id, visitId: v.visitId, step: 'invitation', origin: 'scan', day: today }]);
  await processSendReminder(ctx, { data: { practiceId: p.practice.id, visitId: v.visitId, step: 'invitation', origin: 'scan', day: today } });
  const [m] = await mailbox(v.email!);
  const reply = /\/r\/([A-Za-z0-9_-]+\.[A-Za-z0-9_-]+)\?answer=confirmed/.exec(m!.text)![1]!;
  const unsub = /\/u\/([A-Za-z0-9_-]+\.[A-Za-z0-9_-]+)/.exec(m!.text)![1]!;
  expect(m!.listUnsubscribe).toContain(`/api/unsubscribe/${unsub}`);
  return { p, visits, v, row: row!, reply, unsub };
}

async function snapshot(visitId: string) {
  const visit = await knex()('recall_visit').where({ id: visitId }).first('status', 'booked_date', 'proposed_start', 'updated_at');
  const [log, nonces] = await Promise.all([
    knex()('contact_log_entry').where({ visit_id: visitId }).count('* as n').first(),
    knex()('reply_nonce').where({ visit_id: visitId }).count('* as n').first(),
  ]);
  return { visit, log, nonces };
}

describe('reply links', () => {
  it('opening the link shows the practice and due month and changes nothing', async () => {
    const { v, reply } = await invited();
    const before = await snapshot(v.visitId);
    const audits = await knex()('audit_event').count('* as n').first();
    const found = await lookupReply(services.em(), reply);
    expect(found).toMatchObject({ ok: true, view: { practiceName: expect.stringMatching(/^Practice reply/), dueMonth: expect.stringMatching(/^\w+ \d{4}$/), appointment: null } });
    expect(await snapshot(v.visitId)).toEqual(before);
    expect(await knex()('audit_event').count('* as n').first()).toEqual(audits);
  });

  it('confirms once; a second use is refused and changes nothing', async () => {
    const { v, row, reply } = await invited();
    expect(await answerReply(services.em(), { token: reply, answer: 'confirmed' }, origin)).toMatchObject({ ok: true, answer: 'confirmed' });
    expect(await knex()('recall_visit').where({ id: v.visitId }).first('status')).toEqual({ status: 'confirmed' });
    expect(await knex()('reply_nonce').where({ visit_id: v.visitId }).first('reminder_id', 'answer')).toEqual({ reminder_id: row.id, answer: 'confirmed' });
    const log = (await knex()('contact_log_entry').where({ visit_id: v.visitId }).orderBy('at').select('kind', 'by', 'answer', 'to_status')) as object[];
    expect(log.slice(-2)).toEqual([
      { kind: 'reply', by: 'patient', answer: 'confirmed', to_status: null },
      { kind: 'status_change', by: 'patient', answer: null, to_status: 'confirmed' },
    ]);
    expect(await knex()('audit_event').where({ action: 'recall.reply', entity_id: v.visitId }).first('actor_id', 'ip')).toEqual({ actor_id: null, ip: '127.0.0.9' });

    const after = await snapshot(v.visitId);
    for (const answer of ['confirmed', 'declined', 'another_time']) {
      expect(await answerReply(services.em(), { token: reply, answer, note: 'again' }, origin)).toMatchObject({ ok: false, reason: 'used', message: expect.stringMatching(/already been used/) });
    }
    expect(await lookupReply(services.em(), reply)).toMatchObject({ ok: false, reason: 'used' });
    expect(await snapshot(v.visitId)).toEqual(after);
  });

  it('a tampered token and an expired token are refused and change nothing', async () => {
    const { v, reply } = await invited();
    const before = await snapshot(v.visitId);
    const [payload, signature] = reply.split('.') as [string, string];
    const flipped = `${payload}.${signature[0] === 'A' ? 'B' : 'A'}${signature.slice(1)}`;
    // Another visit's id in the payload, signature kept.
    const forged = `${Buffer.from(Buffer.from(payload, 'base64url').toString().replace(v.visitId, '00000000-0000-4000-8000-000000000001')).toString('base64url')}.${signature}`;
    for (const token of [flipped, forged, `${reply}x`, 'not-a-token']) {
      const r = await answerReply(services.em(), { token, answer: 'declined' }, origin);
      expect(r.ok).toBe(false);
      expect(['tampered', 'malformed']).toContain((r as { reason: string }).reason);
    }
    // The real link, 46 days later: expired (reply links last 45 days).
    const later = new Date(Date.now() + 46 * 86_400_000);
    expect(await answerReply(services.em(), { token: reply, answer: 'declined' }, origin, later)).toMatchObject({ ok: false, reason: 'expired', message: expect.stringMatching(/expired/) });
    // A token issued long ago for this visit.
    const old = issueReplyToken({ visitId: v.visitId }, secret, new Date(Date.now() - 50 * 86_400_000)).token;
    expect(await answerReply(services.em(), { token: old, answer: 'confirmed' }, origin)).toMatchObject({ ok: false, reason: 'expired' });
    expect(await lookupReply(services.em(), old)).toMatchObject({ ok: false, reason: 'expired' });
    expect(await snapshot(v.visitId)).toEqual(before);
    // The real link still works afterwards.
    expect(await answerReply(services.em(), { token: reply, answer: 'confirmed' }, origin)).toMatchObject({ ok: true });
  });

  it('another time: the note goes to the contact log, the proposed time is withdrawn, the status stays', async () => {
    const { v, reply } = await invited();
    await knex()('recall_visit').where({ id: v.visitId }).update({ proposed_start: new Date(Date.now() + 5 * 86_400_000) });
    expect(await lookupReply(services.em(), reply)).toMatchObject({ ok: true, view: { appointment: expect.any(String) } });
    await expect(answerReply(services.em(), { token: reply, answer: 'another_time', note: 'x'.repeat(1001) }, origin)).rejects.toBeInstanceOf(ValidationError);
    expect(await answerReply(services.em(), { token: reply, answer: 'another_time', note: 'Tuesdays after 4 pm suit me.' }, origin)).toMatchObject({ ok: true });
    expect(await knex()('recall_visit').where({ id: v.visitId }).first('status', 'proposed_start')).toEqual({ status: 'invited', proposed_start: null });
    expect(await knex()('contact_log_entry').where({ visit_id: v.visitId, kind: 'reply' }).first('answer', 'note')).toEqual({ answer: 'another_time', note: 'Tuesdays after 4 pm suit me.' });
  });

  it('decline: the visit and the case’s later open visits are declined', async () => {
    const { visits, reply } = await invited([{ dueIn: 10 }, { dueIn: 375, milestone: 24, sameCaseAs: 0 }]);
    expect(await answerReply(services.em(), { token: reply, answer: 'declined' }, origin)).toMatchObject({ ok: true });
    const statuses = (await knex()('recall_visit').whereIn('id', visits.map((x) => x.visitId)).orderBy('milestone').select('status')) as { status: string }[];
    expect(statuses.map((s) => s.status)).toEqual(['declined', 'declined']);
  });

  it('a reply to a visit that is already final is refused without using the link', async () => {
    const { v, reply } = await invited();
    await knex()('recall_visit').where({ id: v.visitId }).update({ status: 'attended' });
    expect(await answerReply(services.em(), { token: reply, answer: 'confirmed' }, origin)).toMatchObject({ ok: false, reason: 'closed' });
    expect(await knex()('reply_nonce').count('* as n').first()).toMatchObject({ n: '0' });
  });
});

describe('unsubscribe', () => {
  it('the page withdraws the recall-contact consent once; later reminders are not sent', async () => {
    const { p, v, unsub } = await invited();
    expect(await lookupUnsubscribe(services.em(), unsub)).toMatchObject({ ok: true, view: { alreadyWithdrawn: false } });
    expect(await knex()('patient').where({ id: v.patientId }).first('recall_contact')).toEqual({ recall_contact: true });
    expect(await unsubscribe(services.em(), unsub, origin, 'page')).toMatchObject({ ok: true, alreadyWithdrawn: false });
    expect(await knex()('patient').where({ id: v.patientId }).first('recall_contact')).toEqual({ recall_contact: false });
    expect(await knex()('contact_log_entry').where({ visit_id: v.visitId, kind: 'consent_withdrawn' }).count('* as n').first()).toMatchObject({ n: '1' });
    expect(await knex()('audit_event').where({ action: 'patient.consent_withdrawn', entity_id: v.patientId }).count('* as n').first()).toMatchObject({ n: '1' });
    expect(await unsubscribe(services.em(), unsub, origin, 'page')).toMatchObject({ ok: true, alreadyWithdrawn: true });
    expect(await knex()('audit_event').where({ action: 'patient.consent_withdrawn' }).count('* as n').first()).toMatchObject({ n: '1' });

    // The second invitation, queued before the patient unsubscribed, is not sent.
    await insertOutboxRows(services.em(), [{ practiceId: p.practice.id, visitId: v.visitId, step: 'second_invitation', origin: 'scan', day: today }]);
    await expect(
      processSendReminder(ctx, { data: { practiceId: p.practice.id, visitId: v.visitId, step: 'second_invitation', origin: 'scan', day: today } }),
    ).rejects.toMatchObject({ name: 'UnrecoverableError' });
    expect((await mailbox(v.email!)).length).toBe(1);
  });

  it('leaves a consistent record: consent off and channel none, and the patient can still be edited (issue 9 item 13)', async () => {
    const { p, v, unsub } = await invited();
    expect(await unsubscribe(services.em(), unsub, origin, 'page')).toMatchObject({ ok: true });
    expect(await knex()('patient').where({ id: v.patientId }).first('recall_contact', 'recall_channel')).toEqual({ recall_contact: false, recall_channel: 'none' });
    // Any edit afterwards is accepted (it was refused with 422 "the channel must be none").
    const edited = await updatePatient(services.em(), p.coordinator, v.patientId, { familyName: 'Ashdown-Vale' });
    expect(edited).toMatchObject({ familyName: 'Ashdown-Vale', recallContact: false, recallChannel: 'none' });
  });

  it('a record unsubscribed before the fix (consent off, channel still e-mail) can be edited and is repaired', async () => {
    const { p, v } = await invited();
    await knex()('patient').where({ id: v.patientId }).update({ recall_contact: false, recall_channel: 'email' });
    const edited = await updatePatient(services.em(), p.coordinator, v.patientId, { givenName: 'Wrenna' });
    expect(edited).toMatchObject({ givenName: 'Wrenna', recallContact: false, recallChannel: 'none' });
    expect(await knex()('patient').where({ id: v.patientId }).first('recall_channel')).toEqual({ recall_channel: 'none' });
  });

  it('the RFC 8058 one-click POST unsubscribes; a GET only redirects to the page; a bad token is refused', async () => {
    const { v, unsub } = await invited();
    const params = (token: string) => ({ params: Promise.resolve({ token }) });
    const get = await unsubscribeGet(new Request(`${env.APP_URL}/api/unsubscribe/${unsub}`), params(unsub));
    expect(get.status).toBe(303);
    expect(get.headers.get('location')).toBe(`${env.APP_URL}/u/${unsub}`);
    expect(await knex()('patient').where({ id: v.patientId }).first('recall_contact')).toEqual({ recall_contact: true });

    const body = () => ({ method: 'POST', body: 'List-Unsubscribe=One-Click', headers: { 'Content-Type': 'application/x-www-form-urlencoded' } });
    const bad = await oneClick(new Request(`${env.APP_URL}/api/unsubscribe/x.y`, body()), params('x.y'));
    expect(bad.status).toBe(400);
    const res = await oneClick(new Request(`${env.APP_URL}/api/unsubscribe/${unsub}`, body()), params(unsub));
    expect(res.status).toBe(200);
    expect(await res.text()).toMatch(/unsubscribed/);
    expect(await knex()('patient').where({ id: v.patientId }).first('recall_contact')).toEqual({ recall_contact: false });
    expect(await knex()('audit_event').where({ action: 'patient.consent_withdrawn' }).first('detail')).toMatchObject({ detail: { via: 'one_click' } });
  });
});

import { afterEach, beforeAll, describe, expect, test } from 'vitest';
import crypto from 'node:crypto';
import nodemailer from 'nodemailer';
import { mailboxHeaders } from '@/lib/mail/mailbox-secret';

/**
 * The local SMTP fake (scripts/mail-fake.ts) that scripts/test.sh runs: real SMTP in, JSON out
 * over its HTTP API. SMTP_URL, MAILBOX_URL and the run's MAILBOX_SECRET come from the
 * environment test.sh exports.
 */
const smtpUrl = process.env.SMTP_URL;
const mailboxUrl = process.env.MAILBOX_URL;
const secret = process.env.MAILBOX_SECRET;

interface Stored {
  id: string;
  receivedAt: string;
  messageId: string | null;
  envelope: { mailFrom: string | null; rcptTo: string[] };
  from: string;
  to: string[];
  cc: string[];
  subject: string;
  text: string;
  html: string | null;
  headers: Record<string, string | string[]>;
  listUnsubscribe: string | null;
  attachments: { filename: string | null; contentType: string; size: number; content: string }[];
}

/** `key`: the secret to send (null: none). */
const api = async (path: string, init?: RequestInit, key: string | null | undefined = secret) => {
  const res = await fetch(new URL(path, mailboxUrl), { ...init, headers: { ...(init?.headers as Record<string, string>), ...mailboxHeaders(key ?? undefined) } });
  return { status: res.status, body: (await res.json()) as unknown };
};
const control = (body: unknown) => api('/control', { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) });
const unique = (label: string) => `${label}-${crypto.randomBytes(4).toString('hex')}@example.test`;
const transport = () => nodemailer.createTransport(smtpUrl!);

describe('the local SMTP fake', () => {
  beforeAll(() => {
    if (!smtpUrl || !mailboxUrl || !secret) throw new Error('SMTP_URL, MAILBOX_URL and MAILBOX_SECRET must point at the mail fake (npm test sets them)');
  });

  afterEach(async () => {
    await control({ refuse: 0 });
  });

  test('answers nothing but its health check without the run’s secret', async () => {
    const to = unique('secret');
    await transport().sendMail({ from: 'Lamina <no-reply@lamina.invalid>', to, subject: 'A sign-in link', text: 'https://lamina.invalid/x' });
    for (const key of [null, 'not-the-secret-of-this-run', `${secret}x`]) {
      expect((await api(`/messages?to=${encodeURIComponent(to)}`, undefined, key)).status).toBe(401);
      expect((await api('/messages', { method: 'DELETE' }, key)).status).toBe(401);
      expect((await api('/control', { method: 'POST', headers: { 'content-type': 'application/json' }, body: '{"refuse":1}' }, key)).status).toBe(401);
    }
    const { status, body } = await api(`/messages?to=${encodeURIComponent(to)}`);
    expect(status).toBe(200);
    expect((body as Stored[]).map((m) => m.subject)).toEqual(['A sign-in link']);
    expect((await api('/health', undefined, null)).status).toBe(200);
  });

  test('answers its health check', async () => {
    const { status, body } = await api('/health');
    expect(status).toBe(200);
    expect(body).toMatchObject({ ok: true, smtpPort: Number(new URL(smtpUrl!).port), refusing: 0 });
  });

  test('stores a message sent over SMTP, with headers and attachments, and serves it back', async () => {
    const to = unique('reader');
    const cc = unique('copy');
    const info = await transport().sendMail({
      from: 'Lamina <no-reply@lamina.invalid>',
      to,
      cc,
      subject: 'Your recall is due — tooth 36',
      text: 'Plain body: https://lamina.invalid/link',
      html: '<p>HTML body</p>',
      headers: { 'List-Unsubscribe': '<https://lamina.invalid/unsubscribe/abc>' },
      attachments: [{ filename: 'recall.ics', content: 'BEGIN:VCALENDAR\r\nEND:VCALENDAR\r\n', contentType: 'text/calendar' }],
    });
    expect(info.accepted).toEqual([to, cc]);

    const list = await api(`/messages?to=${encodeURIComponent(to.toUpperCase())}`);
    expect(list.status).toBe(200);
    const messages = list.body as Stored[];
    expect(messages).toHaveLength(1);
    const m = messages[0]!;
    expect(m).toMatchObject({
      from: expect.stringContaining('no-reply@lamina.invalid'),
      to: [to],
      cc: [cc],
      envelope: { mailFrom: 'no-reply@lamina.invalid', rcptTo: [to, cc] },
      subject: 'Your recall is due — tooth 36',
      text: expect.stringContaining('https://lamina.invalid/link'),
      html: '<p>HTML body</p>',
      listUnsubscribe: '<https://lamina.invalid/unsubscribe/abc>',
      messageId: info.messageId,
    });
    expect(m.headers['list-unsubscribe']).toBe('<https://lamina.invalid/unsubscribe/abc>');
    expect(new Date(m.receivedAt).getTime()).toBeGreaterThan(Date.now() - 60_000);
    expect(m.attachments).toHaveLength(1);
    expect(m.attachments[0]).toMatchObject({ filename: 'recall.ics', contentType: 'text/calendar' });
    expect(Buffer.from(m.attachments[0]!.content, 'base64').toString()).toContain('BEGIN:VCALENDAR');

    // The Cc recipient finds it too; one message by id; an unknown id is a 404.
    expect((await api(`/messages?to=${encodeURIComponent(cc)}`)).body).toHaveLength(1);
    const one = await api(`/messages/${m.id}`);
    expect(one.status).toBe(200);
    expect((one.body as Stored).id).toBe(m.id);
    expect((await api('/messages/0000000000000-000000-00000000')).status).toBe(404);
    expect((await api('/messages/..%2F..%2Fetc%2Fpasswd')).status).toBe(404);
  });

  test('lists newest first', async () => {
    const to = unique('order');
    for (const subject of ['first', 'second', 'third']) await transport().sendMail({ from: 'a@lamina.invalid', to, subject, text: subject });
    const { body } = await api(`/messages?to=${encodeURIComponent(to)}`);
    expect((body as Stored[]).map((m) => m.subject)).toEqual(['third', 'second', 'first']);
    const limited = await api(`/messages?to=${encodeURIComponent(to)}&limit=1`);
    expect((limited.body as Stored[]).map((m) => m.subject)).toEqual(['third']);
  });

  test('a lookup by recipient finds exactly that recipient’s messages, and no longer a removed one', async () => {
    const [a, b] = [unique('lookup-a'), unique('lookup-b')];
    await transport().sendMail({ from: 'a@lamina.invalid', to: a, subject: 'to a', text: 'a' });
    await transport().sendMail({ from: 'a@lamina.invalid', to: b, cc: a, subject: 'to b, cc a', text: 'b' });
    const forA = (await api(`/messages?to=${encodeURIComponent(a)}`)).body as Stored[];
    expect(forA.map((m) => m.subject)).toEqual(['to b, cc a', 'to a']);
    expect(((await api(`/messages?to=${encodeURIComponent(b)}`)).body as Stored[]).map((m) => m.subject)).toEqual(['to b, cc a']);
    expect((await api(`/messages/${forA[1]!.id}`, { method: 'DELETE' })).status).toBe(200);
    expect(((await api(`/messages?to=${encodeURIComponent(a)}`)).body as Stored[]).map((m) => m.subject)).toEqual(['to b, cc a']);
  });

  test('refuses the next N transactions with a 451 when told to, then accepts again', async () => {
    const to = unique('refused');
    expect(await control({ refuse: 2 })).toEqual({ status: 200, body: { refusing: 2, hanging: 0 } });
    const send = () => transport().sendMail({ from: 'a@lamina.invalid', to, subject: 'try', text: 'try' });

    for (let i = 0; i < 2; i++) {
      const err = (await send().then(
        () => null,
        (e: unknown) => e,
      )) as { responseCode?: number } | null;
      expect(err, `attempt ${i + 1} should be refused`).not.toBeNull();
      expect(err!.responseCode).toBe(451);
    }
    await expect(send()).resolves.toMatchObject({ accepted: [to] });
    expect((await api(`/messages?to=${encodeURIComponent(to)}`)).body).toHaveLength(1);
  });

  test('{"refuse": 0} stops refusing', async () => {
    await control({ refuse: 5 });
    expect((await control({ refuse: 0 })).body).toEqual({ refusing: 0, hanging: 0 });
    const to = unique('accepted');
    await expect(transport().sendMail({ from: 'a@lamina.invalid', to, subject: 'ok', text: 'ok' })).resolves.toMatchObject({ accepted: [to] });
  });

  test('rejects bad input', async () => {
    expect((await control({ refuse: -1 })).status).toBe(400);
    expect((await control({ refuse: 'many' })).status).toBe(400);
    expect((await control({ refuse: 1, extra: true })).status).toBe(400);
    expect((await api('/control', { method: 'POST', body: 'not json' })).status).toBe(400);
    expect((await api('/messages?limit=0')).status).toBe(400);
    expect((await api('/nowhere')).status).toBe(404);
    expect((await api('/health')).body).toMatchObject({ refusing: 0 });
  });

  test('DELETE /messages clears the mailbox', async () => {
    const to = unique('cleared');
    await transport().sendMail({ from: 'a@lamina.invalid', to, subject: 'bye', text: 'bye' });
    const { status, body } = await api('/messages', { method: 'DELETE' });
    expect(status).toBe(200);
    expect((body as { deleted: number }).deleted).toBeGreaterThanOrEqual(1);
    expect((await api('/messages')).body).toEqual([]);
  });
});

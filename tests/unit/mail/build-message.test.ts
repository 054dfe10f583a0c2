import nodemailer, { type SendMailOptions } from 'nodemailer';
import { describe, expect, it } from 'vitest';
import { buildMessage } from '@/jobs/mail';

// jobs/mail.ts builds each message in memory and sends the buffer (`raw`): the bytes and the
// envelope must be those nodemailer's own sendMail writes. The reference is nodemailer's stream
// transport (`buffer: true`: the message sendMail would put on the wire, CRLF line ends), with
// the date and the MIME boundaries fixed so that two builds can be compared byte for byte.
/** `baseBoundary`: nodemailer's option (not in its types) that fixes the MIME boundaries. */
const base: SendMailOptions & { baseBoundary: string } = {
  from: { name: 'Harbour & Söhne Endodontics', address: 'no-reply@lamina.invalid' },
  to: 'rowan.mere@patients.example.invalid',
  subject: 'Your review – March 2026 (ünïcödé, a long subject that has to be folded over more than one header line)',
  text: 'Dear Rowan,\n.\nA line with only a dot above: SMTP dot-stuffing is the transport’s, not the builder’s.\n',
  html: '<p>Dear Rowan,</p>\n.\n<p><a href="https://lamina.invalid/r/abc?answer=confirmed&amp;x=1">Confirm</a></p>',
  messageId: '<reminder.0b6c2f0e@lamina.invalid>',
  date: new Date('2026-03-01T09:30:00Z'),
  baseBoundary: 'lamina-test-boundary',
  textEncoding: 'base64',
  headers: { 'List-Unsubscribe': '<https://lamina.invalid/api/unsubscribe/abc>', 'List-Unsubscribe-Post': 'List-Unsubscribe=One-Click', 'Auto-Submitted': 'auto-generated' },
};

const viaNodemailer = async (mail: SendMailOptions) => {
  const info = await nodemailer.createTransport({ streamTransport: true, buffer: true, newline: 'windows' }).sendMail(mail);
  return { raw: info.message as Buffer, envelope: info.envelope };
};

describe('buildMessage: the bytes nodemailer’s sendMail would send', () => {
  it.each([
    ['HTML and text, base64', base],
    ['with a calendar attachment', { ...base, attachments: [{ filename: 'appointment.ics', content: 'BEGIN:VCALENDAR\r\nVERSION:2.0\r\nEND:VCALENDAR\r\n', contentType: 'text/calendar; charset=utf-8; method=PUBLISH' }] }],
    ['text only, quoted-printable', { ...base, html: undefined, textEncoding: 'quoted-printable' as const }],
  ])('%s', async (_label, mail) => {
    const built = await buildMessage(mail);
    const reference = await viaNodemailer(mail);
    expect(built.raw.toString('utf8')).toBe(reference.raw.toString('utf8'));
    expect(built.raw.equals(reference.raw)).toBe(true);
    expect(built.envelope).toEqual({ from: 'no-reply@lamina.invalid', to: ['rowan.mere@patients.example.invalid'] });
    expect(built.envelope).toEqual(reference.envelope);
  });

  it('keeps the Message-ID it was given (the delivery check looks it up)', async () => {
    const { raw } = await buildMessage(base);
    expect(raw.toString('utf8')).toMatch(/^Message-ID: <reminder\.0b6c2f0e@lamina\.invalid>\r$/m);
  });
});

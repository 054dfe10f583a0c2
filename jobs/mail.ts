/**
 * The worker's mail side: a pooled SMTP transport to SMTP_URL, the reminder renderer (React
 * Email, memoised) and the delivery check used after a crash (see jobs/send-reminder.ts).
 */
import nodemailer, { type SendMailOptions, type SentMessageInfo } from 'nodemailer';
import MailComposer from 'nodemailer/lib/mail-composer';
import type MimeNode from 'nodemailer/lib/mime-node';
import { z } from 'zod';
import { renderTemplate } from '@/lib/mail/mailer';
import { mailboxHeaders } from '@/lib/mail/mailbox-secret';
import { ReminderEmail, type ReminderEmailProps } from '@/lib/mail/templates/ReminderEmail';

export interface TransportOptions {
  /** Parallel SMTP connections (SMTP_MAX_CONNECTIONS: jobs/config.ts). */
  maxConnections: number;
  /** Socket and greeting timeouts, ms: shorter than the claim lease, so a hung relay fails the attempt. */
  timeoutMs: number;
}

/** What the mail jobs need of a transport (jobs/outbox-send.ts), and the worker to close it. */
export interface ReminderTransport {
  sendMail(mail: SendMailOptions): Promise<SentMessageInfo>;
  close(): void;
}

/**
 * A message as the bytes nodemailer's own sendMail would write (its MailComposer, which sendMail
 * runs; Lamina sets none of the options sendMail adds headers for — xMailer, priority, list, DKIM),
 * with the SMTP envelope it would use.
 */
export async function buildMessage(mail: SendMailOptions): Promise<{ envelope: MimeNode.Envelope; raw: Buffer }> {
  const node = new MailComposer(mail).compile();
  return { envelope: node.getEnvelope(), raw: await node.build() };
}

/**
 * A pooled nodemailer transport for SMTP_URL (options added to the URL, which nodemailer parses)
 * that builds each message in memory first and hands it over as one buffer (`raw`). Streamed the
 * usual way, a message goes to the socket in a write per header and per encoded chunk — each a
 * system call and a wake-up of the relay over loopback — which cost the worker and the local fake
 * more than building the message did (reminder bench, issue 15). Same bytes, same envelope, same
 * errors (a refusal still has its responseCode, a lost connection its code).
 */
export function createReminderTransport(smtpUrl: string, options: TransportOptions): ReminderTransport {
  const url = new URL(smtpUrl);
  url.searchParams.set('pool', 'true');
  url.searchParams.set('maxConnections', String(options.maxConnections));
  url.searchParams.set('maxMessages', '1000');
  url.searchParams.set('connectionTimeout', String(options.timeoutMs));
  url.searchParams.set('greetingTimeout', String(options.timeoutMs));
  url.searchParams.set('socketTimeout', String(options.timeoutMs));
  const pool = nodemailer.createTransport(url.toString());
  return {
    async sendMail(mail) {
      const { envelope, raw } = await buildMessage(mail);
      return pool.sendMail({ envelope: mail.envelope ?? envelope, raw });
    },
    close: () => pool.close(),
  };
}

// --- rendering ------------------------------------------------------------------------------------

/**
 * Rendering a React Email template costs about 15 ms (HTML and text). Reminders of one practice,
 * step and due date differ only in the first name and the four links, so the template is
 * rendered once per shape with placeholders and the values are put in afterwards — escaped for
 * HTML exactly as React escapes text and attributes. tests/integration/recall-scan.test.ts
 * checks the result is byte-for-byte what a direct render gives, names with & < > " ' included.
 */
const PLACEHOLDER = {
  firstName: 'LAMINAXFIRSTNAMEX',
  confirm: 'LAMINAXCONFIRMX',
  reschedule: 'LAMINAXRESCHEDULEX',
  decline: 'LAMINAXDECLINEX',
  unsubscribe: 'LAMINAXUNSUBSCRIBEX',
} as const;

/** React DOM's escaping of text and attribute values. */
export function escapeHtml(value: string): string {
  return value.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#x27;' })[c]!);
}

const cache = new Map<string, { html: string; text: string }>();
const CACHE_MAX = 500;

export async function renderReminder(props: ReminderEmailProps): Promise<{ html: string; text: string }> {
  const values = {
    firstName: props.firstName,
    confirm: props.links.confirm,
    reschedule: props.links.reschedule,
    decline: props.links.decline,
    unsubscribe: props.links.unsubscribe,
  };
  // A value that contains a placeholder (cannot happen with our links and names) is rendered directly.
  if (Object.values(values).some((v) => v.includes('LAMINAX'))) return renderTemplate(ReminderEmail(props));
  const shape: ReminderEmailProps = {
    ...props,
    firstName: PLACEHOLDER.firstName,
    links: { confirm: PLACEHOLDER.confirm, reschedule: PLACEHOLDER.reschedule, decline: PLACEHOLDER.decline, unsubscribe: PLACEHOLDER.unsubscribe },
  };
  const key = JSON.stringify([shape.wording, shape.practiceName, shape.dueDate, shape.contact, shape.appointment ?? null]);
  let rendered = cache.get(key);
  if (!rendered) {
    rendered = await renderTemplate(ReminderEmail(shape));
    if (cache.size >= CACHE_MAX) cache.delete(cache.keys().next().value!);
    cache.set(key, rendered);
  }
  let { html, text } = rendered;
  for (const [name, placeholder] of Object.entries(PLACEHOLDER) as [keyof typeof PLACEHOLDER, string][]) {
    html = html.split(placeholder).join(escapeHtml(values[name]));
    text = text.split(placeholder).join(values[name]);
  }
  return { html, text };
}

// --- delivery check -------------------------------------------------------------------------------

const StoredMessages = z.array(z.object({ messageId: z.string().nullish() }).loose());

/**
 * Did the relay store a message with this Message-ID for this recipient? Only the local SMTP
 * fake can say (its HTTP API at MAILBOX_URL, with the run's MAILBOX_SECRET; demo mode only); a production relay would need its own lookup
 * (most offer a message search by Message-ID) wired in here. Throws when the fake does not
 * answer: the caller must then not guess.
 */
export function mailboxDeliveryCheck(mailboxUrl: string, secret: string | undefined) {
  return async (messageId: string, to: string): Promise<boolean> => {
    const url = new URL('/messages', mailboxUrl);
    url.searchParams.set('to', to);
    const res = await fetch(url, { headers: mailboxHeaders(secret), signal: AbortSignal.timeout(10_000) });
    if (!res.ok) throw new Error(`the mailbox answered ${res.status}`);
    const parsed = StoredMessages.safeParse(await res.json());
    if (!parsed.success) throw new Error('the mailbox answered in an unexpected form');
    return parsed.data.some((m) => m.messageId === messageId);
  };
}

export type DeliveryCheck = ReturnType<typeof mailboxDeliveryCheck>;

import 'server-only';
import nodemailer, { type Transporter } from 'nodemailer';
import { render } from '@react-email/render';
import type { ReactElement } from 'react';
import { env } from '@/lib/env';

/**
 * One mailer for every message Lamina sends (sign-in links, invitations, later reminders).
 * It speaks real SMTP to SMTP_URL: the local fake in demo and tests, a hosted relay in production.
 */
const g = globalThis as unknown as { __laminaMailer?: Transporter };

export function mailer(): Transporter {
  g.__laminaMailer ??= nodemailer.createTransport(env.SMTP_URL, { from: env.MAIL_FROM });
  return g.__laminaMailer;
}

export interface OutgoingMail {
  to: string;
  subject: string;
  /** One template gives both the HTML and the plain-text part. */
  template: ReactElement;
  headers?: Record<string, string>;
  attachments?: { filename: string; content: string; contentType: string }[];
}

export async function renderTemplate(template: ReactElement): Promise<{ html: string; text: string }> {
  const [html, text] = await Promise.all([render(template), render(template, { plainText: true })]);
  return { html, text };
}

export async function sendMail(mail: OutgoingMail): Promise<{ messageId: string }> {
  const { html, text } = await renderTemplate(mail.template);
  const info = await mailer().sendMail({
    from: env.MAIL_FROM,
    to: mail.to,
    subject: mail.subject,
    html,
    text,
    headers: mail.headers,
    attachments: mail.attachments,
  });
  return { messageId: info.messageId };
}

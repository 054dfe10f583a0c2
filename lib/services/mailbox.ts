import 'server-only';
import { z } from 'zod';
import { env } from '@/lib/env';
import type { EntityManager } from '@mikro-orm/postgresql';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { mailboxHeaders } from '@/lib/mail/mailbox-secret';
import { audit } from './audit';
import { NotFoundError, ServiceError } from './errors';

/** One message as the local SMTP fake stored it. */
export const StoredMessage = z.object({
  id: z.string(),
  receivedAt: z.string(),
  from: z.string().nullish(),
  to: z.union([z.string(), z.array(z.string())]).nullish(),
  subject: z.string().nullish(),
  text: z.string().nullish(),
  html: z.string().nullish(),
  headers: z.record(z.string(), z.unknown()).nullish(),
  attachments: z.array(z.object({ filename: z.string().nullish(), contentType: z.string().nullish() }).loose()).nullish(),
});
export type StoredMessage = z.infer<typeof StoredMessage>;

/**
 * The dev mailbox: reads the local SMTP fake's messages. It exists only in demo mode
 * (LAMINA_DEMO=1, lib/env.ts); otherwise every call is a 404. Every read is audited.
 */
export async function listMailbox(em: EntityManager, actor: Actor): Promise<StoredMessage[]> {
  assertCan(actor, 'mailbox.read');
  const body = await fetchMailbox('/messages');
  const parsed = z.array(StoredMessage).safeParse(Array.isArray(body) ? body : (body as { messages?: unknown }).messages);
  if (!parsed.success) throw new ServiceError('The local mailbox answered in an unexpected form.', 502);
  await audit(em, actor, { action: 'mailbox.list', detail: { messages: parsed.data.length } });
  return parsed.data;
}

export async function readMailboxMessage(em: EntityManager, actor: Actor, id: string): Promise<StoredMessage> {
  assertCan(actor, 'mailbox.read');
  const parsed = StoredMessage.safeParse(await fetchMailbox(`/messages/${encodeURIComponent(id)}`));
  if (!parsed.success) throw new NotFoundError('No such message.');
  await audit(em, actor, { action: 'mailbox.read', entityType: 'mail_message', entityId: parsed.data.id });
  return parsed.data;
}

async function fetchMailbox(path: string): Promise<unknown> {
  if (!env.localMail || !env.MAILBOX_URL) throw new NotFoundError('The dev mailbox exists only in demo mode.');
  let res: Response;
  try {
    res = await fetch(new URL(path, env.MAILBOX_URL), {
      cache: 'no-store',
      headers: mailboxHeaders(env.MAILBOX_SECRET),
      signal: AbortSignal.timeout(3_000),
    });
  } catch {
    throw new ServiceError('The local mailbox is not running.', 503);
  }
  if (res.status === 404) throw new NotFoundError('No such message.');
  if (!res.ok) throw new ServiceError('The local mailbox could not be read.', 502);
  return res.json();
}

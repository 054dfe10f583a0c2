import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { env } from '@/lib/env';
import { requireActor } from '@/lib/auth/session';
import { listMailbox } from '@/lib/services/mailbox';
import { Notice } from '@/components/ui/Notice';
import { fmtDateTime } from '@/components/ui/format';

export const metadata: Metadata = { title: 'Dev mailbox' };

export default async function DevMailboxPage() {
  if (!env.localMail) notFound();
  const { em, actor } = await requireActor('mailbox.read', '/dev-mailbox');
  let messages;
  try {
    messages = await listMailbox(em, actor);
  } catch (e) {
    return <Notice tone="alert">{(e as Error).message}</Notice>;
  }
  return (
    <div className="space-y-6">
      <div>
        <h1 className="text-3xl">Dev mailbox</h1>
        <p className="mt-1 text-ink-700">Messages Lamina sent to the local mail fake. This page exists only in demo mode, where mail is caught locally and never delivered; every read is recorded in the audit trail.</p>
      </div>
      {messages.length === 0 ? (
        <p className="card text-ink-700">No messages yet. Invite a colleague, ask for a sign-in link or send a recall reminder and it will appear here.</p>
      ) : (
        <ul className="divide-y divide-bone-200 rounded-lg border border-bone-200 bg-white">
          {messages.map((m) => (
            <li key={m.id} className="px-4 py-3">
              <Link href={`/dev-mailbox/${encodeURIComponent(m.id)}`} className="font-medium">
                {m.subject || '(no subject)'}
              </Link>
              <div className="text-sm text-ink-500">
                to {Array.isArray(m.to) ? m.to.join(', ') : m.to} · {fmtDateTime(m.receivedAt)}
              </div>
            </li>
          ))}
        </ul>
      )}
    </div>
  );
}

import type { Metadata } from 'next';
import { Fragment } from 'react';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { env } from '@/lib/env';
import { requireActor } from '@/lib/auth/session';
import { readMailboxMessage } from '@/lib/services/mailbox';
import { NotFoundError } from '@/lib/services/errors';
import { fmtDateTime } from '@/components/ui/format';

export const metadata: Metadata = { title: 'Message' };

export default async function MailboxMessagePage({ params }: { params: Promise<{ id: string }> }) {
  if (!env.localMail) notFound();
  const { em, actor } = await requireActor('mailbox.read', '/dev-mailbox');
  const { id } = await params;
  const m = await readMailboxMessage(em, actor, id).catch((e) => {
    if (e instanceof NotFoundError) notFound();
    throw e;
  });
  // The headers that show how the message is handled: its identity and the unsubscribe offer.
  const header = (name: string) => {
    const v = m.headers?.[name];
    return typeof v === 'string' ? v : Array.isArray(v) ? v.map(String).join(', ') : null;
  };
  const headerLines = (['message-id', 'list-unsubscribe', 'list-unsubscribe-post'] as const)
    .map((name) => [name.replace(/(^|-)([a-z])/g, (_, d: string, c: string) => d + c.toUpperCase()).replace('Id', 'ID'), header(name)] as const)
    .filter((line): line is readonly [string, string] => line[1] !== null);
  return (
    <div className="space-y-4">
      <p className="text-sm">
        <Link href="/dev-mailbox">← Dev mailbox</Link>
      </p>
      <h1 className="text-2xl">{m.subject || '(no subject)'}</h1>
      <dl className="grid grid-cols-[9rem_1fr] gap-1 text-sm">
        <dt className="text-ink-500">From</dt>
        <dd>{m.from}</dd>
        <dt className="text-ink-500">To</dt>
        <dd>{Array.isArray(m.to) ? m.to.join(', ') : m.to}</dd>
        <dt className="text-ink-500">Received</dt>
        <dd>{fmtDateTime(m.receivedAt)}</dd>
        {(m.attachments?.length ?? 0) > 0 && (
          <>
            <dt className="text-ink-500">Attached</dt>
            <dd>{m.attachments!.map((a) => `${a.filename ?? '(no name)'}${a.contentType ? ` (${a.contentType.split(';')[0]})` : ''}`).join(', ')}</dd>
          </>
        )}
        {headerLines.map(([name, value]) => (
          <Fragment key={name}>
            <dt className="text-ink-500">{name}</dt>
            <dd className="break-all font-mono text-xs">{value}</dd>
          </Fragment>
        ))}
      </dl>
      <h2 className="text-lg">As the recipient sees it</h2>
      {m.html ? (
        // A sandbox: no scripts, no same-origin access. Links open in a new tab (as from a mail
        // program), outside the sandbox, so a reminder's reply and unsubscribe links can be followed.
        <iframe
          title="Message as the recipient sees it"
          sandbox="allow-popups allow-popups-to-escape-sandbox"
          srcDoc={m.html}
          className="h-[36rem] w-full rounded-lg border border-bone-300 bg-white"
        />
      ) : null}
      <details open={!m.html}>
        <summary className="cursor-pointer text-sm font-medium">Plain-text part</summary>
        <pre className="mt-2 whitespace-pre-wrap break-words rounded-md bg-white p-3 text-sm" data-testid="mail-text">
          {m.text}
        </pre>
      </details>
    </div>
  );
}

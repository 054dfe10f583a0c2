import type { Metadata } from 'next';
import Link from 'next/link';
import { requestEm } from '@/lib/db';
import { lookupInvitation } from '@/lib/services/team';
import { Notice } from '@/components/ui/Notice';
import { AcceptForm } from './AcceptForm';

export const metadata: Metadata = { title: 'Accept invitation' };
export const dynamic = 'force-dynamic';

export default async function InvitePage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  const found = await lookupInvitation(await requestEm(), token);
  if (!found.ok) {
    return (
      <div className="space-y-4">
        <h1 className="text-2xl">Invitation</h1>
        <Notice tone="alert">{found.reason}</Notice>
        <Link href="/sign-in">Go to sign in</Link>
      </div>
    );
  }
  return (
    <div className="space-y-4">
      <h1 className="text-2xl">Join {found.view.practiceName}</h1>
      <p className="text-sm text-ink-700">
        You were invited as <strong>{found.view.email}</strong>.{' '}
        {found.view.needsPassword ? 'Choose a password to accept.' : 'You already have a password; confirm your name to accept.'}
      </p>
      <AcceptForm token={token} needsPassword={found.view.needsPassword} />
    </div>
  );
}

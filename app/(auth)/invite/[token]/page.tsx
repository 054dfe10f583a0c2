import type { Metadata } from 'next';
import Link from 'next/link';
import { getRequestContext } from '@/lib/auth/session';
import { lookupInvitation } from '@/lib/services/team';
import { Notice } from '@/components/ui/Notice';
import { AcceptForm, AcceptSignedInForm } from './AcceptForm';

export const metadata: Metadata = { title: 'Accept invitation' };
export const dynamic = 'force-dynamic';

export default async function InvitePage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  const { em, userId } = await getRequestContext();
  const found = await lookupInvitation(em, token);
  if (!found.ok) {
    return (
      <div className="space-y-4">
        <h1 className="text-2xl">Invitation</h1>
        <Notice tone="alert">{found.reason}</Notice>
        <Link href="/sign-in">Go to sign in</Link>
      </div>
    );
  }
  const { view } = found;
  const here = `/invite/${encodeURIComponent(token)}`;
  return (
    <div className="space-y-4">
      <h1 className="text-2xl">Join {view.practiceName}</h1>
      <p className="text-sm text-ink-700">
        <strong>{view.email}</strong> is invited to work in {view.practiceName} as {view.roles.join(', ')}.
      </p>
      {view.needsPassword ? (
        <>
          <p className="text-sm text-ink-700">Choose your name and a password to accept.</p>
          <AcceptForm token={token} />
        </>
      ) : userId === view.userId ? (
        <>
          <p className="text-sm text-ink-700">
            Accepting adds {view.practiceName} to the practices you work in. Nothing changes in your other practices; you
            choose which practice you work in from the top of the page.
          </p>
          <AcceptSignedInForm token={token} practiceName={view.practiceName} />
        </>
      ) : userId ? (
        <Notice tone="alert">
          This invitation is for another account. Sign out, then sign in as {view.email} and open the link again.
        </Notice>
      ) : (
        <>
          <p className="text-sm text-ink-700">You already have a Lamina account. Sign in as {view.email} to accept or leave it.</p>
          <Link className="btn-primary inline-block no-underline" href={`/sign-in?callbackUrl=${encodeURIComponent(here)}&email=${encodeURIComponent(view.email)}`}>
            Sign in to accept
          </Link>
        </>
      )}
    </div>
  );
}

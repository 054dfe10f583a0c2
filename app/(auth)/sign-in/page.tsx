import type { Metadata } from 'next';
import { redirect } from 'next/navigation';
import { getRequestContext } from '@/lib/auth/session';
import { safeReturnPath } from '@/lib/security/return-path';
import { SignInForms } from './SignInForms';

export const metadata: Metadata = { title: 'Sign in' };
export const dynamic = 'force-dynamic';

/** next-auth's error codes in Lamina's words. */
const ERRORS: Record<string, string> = {
  Verification: 'That sign-in link has expired or was already used. Ask for a new one below.',
  AccessDenied: 'That account cannot sign in. Ask your practice administrator.',
  SessionRequired: 'Sign in to continue.',
};

export default async function SignInPage({ searchParams }: { searchParams: Promise<Record<string, string | undefined>> }) {
  const sp = await searchParams;
  const callbackUrl = safeReturnPath(sp.callbackUrl);
  const { actor, mustChoosePractice } = await getRequestContext();
  if (actor) redirect(callbackUrl);
  if (mustChoosePractice) redirect(`/choose-practice?callbackUrl=${encodeURIComponent(callbackUrl)}`);
  return (
    <SignInForms
      callbackUrl={callbackUrl}
      initialEmail={sp.email ?? ''}
      notice={
        sp.accepted
          ? 'Your password is set. Sign in to start.'
          : sp.ended === 'password'
            ? 'Your password is changed and every session has ended. Sign in with the new password.'
            : sp.ended === 'everywhere'
              ? 'You are signed out on every device.'
              : undefined
      }
      error={sp.error ? (ERRORS[sp.error] ?? 'Sign-in did not work. Try again.') : undefined}
    />
  );
}

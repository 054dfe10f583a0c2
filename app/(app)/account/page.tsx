import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { AccountForms } from './AccountForms';

export const metadata: Metadata = { title: 'Your account' };

export default async function AccountPage() {
  const { actor } = await requireActor(undefined, '/account');
  return (
    <div className="max-w-2xl space-y-8">
      <div>
        <h1 className="text-3xl">Your account</h1>
        <p className="mt-1 text-ink-700">
          Signed in as <strong>{actor.email}</strong>, working in {actor.practiceName}.
        </p>
      </div>
      <AccountForms />
    </div>
  );
}

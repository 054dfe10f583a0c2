import type { Metadata } from 'next';
import Link from 'next/link';

export const metadata: Metadata = { title: 'Check your e-mail' };

export default function CheckEmailPage() {
  return (
    <div className="space-y-4">
      <h1 className="text-2xl">Check your e-mail</h1>
      <p className="text-ink-700">
        If that address belongs to a Lamina account, a sign-in link is on its way. It works once and expires in 24 hours.
      </p>
      <Link href="/sign-in">Back to sign in</Link>
    </div>
  );
}

import type { Metadata } from 'next';
import { Wordmark } from '@/components/ui/LaminaMark';

/** Public pages a patient reaches from a reminder e-mail: no account, no navigation, no tracking. */
export const metadata: Metadata = { robots: { index: false, follow: false }, referrer: 'no-referrer' };

export default function PublicLayout({ children }: { children: React.ReactNode }) {
  return (
    <main id="main" className="flex min-h-screen items-start justify-center px-4 py-12 md:items-center">
      <div className="w-full max-w-lg">
        <div className="mb-6 flex justify-center">
          <Wordmark />
        </div>
        <div className="card p-6 md:p-8">{children}</div>
        <p className="mt-6 text-center text-xs text-ink-500">
          Lamina is the follow-up system your dental practice uses to arrange review appointments.
        </p>
      </div>
    </main>
  );
}

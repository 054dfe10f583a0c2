import type { Metadata } from 'next';
import { CardPage } from '@/components/shell/CardPage';

/** Public pages a patient reaches from a reminder e-mail: no account, no navigation, no tracking. */
export const metadata: Metadata = { robots: { index: false, follow: false }, referrer: 'no-referrer' };

export default function PublicLayout({ children }: { children: React.ReactNode }) {
  return (
    <CardPage width="max-w-lg" footer="Lamina is the follow-up system your dental practice uses to arrange review appointments.">
      {children}
    </CardPage>
  );
}

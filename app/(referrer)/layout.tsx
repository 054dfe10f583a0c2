import type { Metadata } from 'next';
import { CardPage } from '@/components/shell/CardPage';

/** Public pages a referring dentist reaches from a practice's e-mail: no account, no navigation, no tracking. */
export const metadata: Metadata = { robots: { index: false, follow: false }, referrer: 'no-referrer' };

export default function ReferrerLayout({ children }: { children: React.ReactNode }) {
  return (
    <CardPage width="max-w-lg" footer="Lamina is the follow-up system the practice that wrote to you uses for its root-canal reviews.">
      {children}
    </CardPage>
  );
}

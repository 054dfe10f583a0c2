import type { Metadata, Viewport } from 'next';
import localFont from 'next/font/local';
import { headers } from 'next/headers';
import { env } from '@/lib/env';
import { DemoBand } from '@/components/shell/DemoBand';
import './globals.css';

// Fonts ship inside the app (OFL-licensed Inter and Source Serif 4, from @fontsource-variable).
const sans = localFont({ src: './fonts/inter-latin-wght.woff2', variable: '--font-sans', display: 'swap' });
const serif = localFont({ src: './fonts/source-serif-4-latin-wght.woff2', variable: '--font-serif', display: 'swap' });

export const metadata: Metadata = {
  title: { default: 'Lamina', template: '%s · Lamina' },
  description: 'Follow-up registry for root canal treatment outcomes.',
  icons: { icon: '/lamina-mark.svg' },
};

export const viewport: Viewport = { width: 'device-width', initialScale: 1, themeColor: '#3a3470' };

/**
 * Every page renders per request: proxy.ts gives each response a fresh CSP nonce, which Next
 * puts on its scripts while rendering (reading the headers opts the whole tree into that).
 */
export default async function RootLayout({ children }: { children: React.ReactNode }) {
  await headers();
  return (
    <html lang="en" className={`${sans.variable} ${serif.variable}`}>
      <body className="min-h-screen">
        {env.localMail && <DemoBand />}
        {children}
      </body>
    </html>
  );
}

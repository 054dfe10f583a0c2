import type { Metadata, Viewport } from 'next';
import localFont from 'next/font/local';
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

export default function RootLayout({ children }: { children: React.ReactNode }) {
  return (
    <html lang="en" className={`${sans.variable} ${serif.variable}`}>
      <body className="min-h-screen">{children}</body>
    </html>
  );
}

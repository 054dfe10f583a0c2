import Link from 'next/link';
import { getRequestContext } from '@/lib/auth/session';
import { ROLE_LABELS } from '@/lib/auth/roles';
import { can } from '@/lib/auth/permissions';
import { env } from '@/lib/env';
import { navFor } from '@/components/shell/nav';
import { AppNav } from '@/components/shell/AppNav';
import { SignOutButton } from '@/components/shell/SignOutButton';
import { PracticeSwitcher } from '@/components/shell/PracticeSwitcher';
import { Wordmark } from '@/components/ui/LaminaMark';
import { Providers } from '@/components/Providers';

export const dynamic = 'force-dynamic';

export default async function AppLayout({ children }: { children: React.ReactNode }) {
  // Each page asks for its own permission and redirects to sign-in with its own return path;
  // signed out, the layout draws no chrome.
  const { actor, practices } = await getRequestContext();
  if (!actor) return <>{children}</>;
  const items = navFor(actor.roles).map(({ href, label, match }) => ({ href, label, match }));
  if (env.localMail && can(actor.roles, 'mailbox.read')) items.push({ href: '/dev-mailbox', label: 'Dev mailbox', match: undefined });
  return (
    <div className="min-h-screen">
      <a href="#main" className="sr-only focus:not-sr-only focus:absolute focus:left-2 focus:top-2 focus:z-10 focus:rounded focus:bg-white focus:p-2">
        Skip to content
      </a>
      <header className="border-b border-bone-300 bg-bone-50 print:hidden">
        <div className="mx-auto flex max-w-6xl flex-wrap items-center gap-x-6 gap-y-3 px-4 py-3">
          <Link href="/" className="no-underline" aria-label="Lamina home">
            <Wordmark />
          </Link>
          <AppNav items={items} />
          <div className="ml-auto flex flex-wrap items-center justify-end gap-3">
            {practices.length > 1 && <PracticeSwitcher current={actor.practiceId} practices={practices} />}
            <div className="text-right text-sm leading-tight" data-testid="whoami">
              <Link href="/account" className="font-medium">
                {actor.name ?? actor.email}
              </Link>
              <div className="text-ink-500">
                {actor.practiceName} · {actor.roles.map((r) => ROLE_LABELS[r]).join(', ')}
              </div>
            </div>
            <SignOutButton />
          </div>
        </div>
      </header>
      <main id="main" className="mx-auto max-w-6xl px-4 py-8 print:max-w-none print:p-0">
        <Providers>{children}</Providers>
      </main>
    </div>
  );
}

import type { Metadata } from 'next';
import { redirect } from 'next/navigation';
import { getRequestContext } from '@/lib/auth/session';
import { Notice } from '@/components/ui/Notice';
import { ChoosePracticeList } from './ChoosePracticeList';

export const metadata: Metadata = { title: 'Choose a practice' };
export const dynamic = 'force-dynamic';

/** People who work in several practices choose one for the session; nothing picks it for them. */
export default async function ChoosePracticePage({ searchParams }: { searchParams: Promise<Record<string, string | undefined>> }) {
  const sp = await searchParams;
  const callbackUrl = sp.callbackUrl?.startsWith('/') && !sp.callbackUrl.startsWith('//') ? sp.callbackUrl : '/';
  const { actor, practices } = await getRequestContext();
  if (practices.length === 0) redirect(`/sign-in?callbackUrl=${encodeURIComponent(callbackUrl)}`);
  if (practices.length === 1) redirect(callbackUrl);
  return (
    <div className="space-y-4">
      <h1 className="text-2xl">Choose a practice</h1>
      {sp.joined && <Notice tone="ok">You joined the practice. Choose where you are working now.</Notice>}
      <p className="text-sm text-ink-700">
        You work in {practices.length} practices on Lamina. Choose the one you are working in now; you can switch at any
        time from the top of the page.
      </p>
      <ChoosePracticeList practices={practices} current={actor?.practiceId ?? null} callbackUrl={callbackUrl} />
    </div>
  );
}

import type { Metadata } from 'next';
import { requestEm } from '@/lib/db';
import { lookupUnsubscribe } from '@/lib/services/recall-replies';
import { Notice } from '@/components/ui/Notice';
import { UnsubscribeForm } from './UnsubscribeForm';

export const metadata: Metadata = { title: 'Unsubscribe' };
export const dynamic = 'force-dynamic';

/** Opening the page changes nothing; the button (a POST) withdraws the consent. */
export default async function UnsubscribePage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  const found = await lookupUnsubscribe(await requestEm(), token);
  return (
    <div className="space-y-4">
      <h1 className="text-2xl">Review e-mails</h1>
      {!found.ok ? (
        <Notice tone="alert">{found.message}</Notice>
      ) : found.view.alreadyWithdrawn ? (
        <Notice tone="ok">You are already unsubscribed: {found.view.practiceName} does not send you follow-up review e-mails.</Notice>
      ) : (
        <>
          <p className="text-ink-700">
            {found.view.practiceName} sends you an e-mail when a follow-up review of your treatment is due. Press the button to stop
            these e-mails. You can still call the practice to arrange a review.
          </p>
          <UnsubscribeForm token={token} />
        </>
      )}
    </div>
  );
}

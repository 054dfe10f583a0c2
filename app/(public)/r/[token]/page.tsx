import type { Metadata } from 'next';
import { requestEm } from '@/lib/db';
import { lookupReply } from '@/lib/services/recall-replies';
import { Notice } from '@/components/ui/Notice';
import { ReplyForm } from './ReplyForm';

export const metadata: Metadata = { title: 'Your follow-up review' };
export const dynamic = 'force-dynamic';

const ANSWERS = ['confirmed', 'another_time', 'declined'] as const;

/**
 * The reply page of a reminder. Opening it changes nothing (mail scanners follow links): the
 * patient's answer is recorded only when they press the button (a POST, through the action).
 */
export default async function ReplyPage({ params, searchParams }: { params: Promise<{ token: string }>; searchParams: Promise<{ answer?: string | string[] }> }) {
  const [{ token }, query] = await Promise.all([params, searchParams]);
  const found = await lookupReply(await requestEm(), token);
  if (!found.ok) {
    return (
      <div className="space-y-4">
        <h1 className="text-2xl">Your follow-up review</h1>
        <Notice tone="alert">{found.message}</Notice>
      </div>
    );
  }
  const wanted = typeof query.answer === 'string' ? query.answer : null;
  const initial = (ANSWERS as readonly string[]).includes(wanted ?? '') ? (wanted as (typeof ANSWERS)[number]) : null;
  const { view } = found;
  return (
    <div className="space-y-4">
      <h1 className="text-2xl">Your follow-up review at {view.practiceName}</h1>
      <p className="text-ink-700">
        Your review is due in <strong>{view.dueMonth}</strong>.
        {view.appointment ? (
          <>
            {' '}
            The practice has set aside <strong>{view.appointment}</strong> for you.
          </>
        ) : null}{' '}
        Please choose an answer and press the button.
      </p>
      <ReplyForm token={token} initial={initial} hasAppointment={Boolean(view.appointment)} />
    </div>
  );
}

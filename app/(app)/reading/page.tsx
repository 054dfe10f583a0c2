import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { readingQueue } from '@/lib/services/readings';
import { REVIEW_SIGNS, REVIEW_SIGN_LABELS } from '@/lib/schemas/review';
import { Caution } from '@/components/ui/Caution';
import { ReadingDesk } from './ReadingDesk';

// The blinded reader's page title names nothing that could bias a reading.
export const metadata: Metadata = { title: 'Reading queue' };

export default async function ReadingPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { em, actor } = await requireActor('reading.queue', '/reading');
  const sp = await searchParams;
  const lead = can(actor.roles, 'reading.lead');
  const scope = sp.scope === 'practice' || (lead && !can(actor.roles, 'reading.score')) ? 'practice' : 'mine';
  const queue = await readingQueue(em, actor, { scope });
  return (
    <div className="space-y-6">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl">Reading queue</h1>
          <p className="mt-1 max-w-3xl text-ink-700">
            Follow-up films waiting to be scored. A share of films, and every film whose first reading means disease, is read again by a
            second clinician who sees the film alone; readings more than one PAI step apart go to a third reader or the lead.
          </p>
        </div>
        <nav aria-label="Whose queue" className="flex flex-wrap gap-2">
          {can(actor.roles, 'reading.score') && (
            <Link href="/reading" aria-current={scope === 'mine' ? 'page' : undefined} className={tab(scope === 'mine')}>
              My queue
            </Link>
          )}
          <Link href="/reading?scope=practice" aria-current={scope === 'practice' ? 'page' : undefined} className={tab(scope === 'practice')}>
            The practice
          </Link>
          {lead && (
            <Link href="/outcomes/agreement" className={tab(false)}>
              Agreement and calibration
            </Link>
          )}
        </nav>
      </div>
      <p data-testid="reading-counts" className="text-sm text-ink-700">
        Practice: {queue.counts['awaiting-first']} awaiting a first reading, {queue.counts['awaiting-second']} a second reading,{' '}
        {queue.counts['awaiting-adjudication']} adjudication; {queue.counts.agreed} agreed.
      </p>
      <Caution text={queue.caution} />
      <ReadingDesk items={queue.items} scope={scope} start={typeof sp.film === 'string' ? sp.film : undefined} signs={REVIEW_SIGNS.map((k) => ({ key: k, label: REVIEW_SIGN_LABELS[k] }))} />
    </div>
  );
}

function tab(current: boolean) {
  return `rounded-md border px-3 py-1 text-sm no-underline ${current ? 'border-dura-700 bg-dura-700 font-semibold text-white' : 'border-bone-300'}`;
}

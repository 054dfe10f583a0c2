import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { getReminderPolicy } from '@/lib/services/recall-policy';
import { PolicyForm } from './PolicyForm';

export const metadata: Metadata = { title: 'Reminder policy' };

export default async function PolicyPage() {
  const { em, actor } = await requireActor('recall.manage', '/desk/policy');
  const view = await getReminderPolicy(em, actor);
  return (
    <div className="space-y-5">
      <p className="text-sm">
        <Link href="/desk">← Recall desk</Link>
      </p>
      <h1 className="text-3xl">Reminder policy</h1>
      <p className="max-w-3xl text-ink-700">
        When invitations go out for each recall visit, and when an unanswered visit closes as lost to follow-up. Lamina’s defaults are common
        practice, not a published standard: adjust them to your practice and local rules.
      </p>
      <PolicyForm initial={view} />
    </div>
  );
}

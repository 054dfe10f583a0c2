import type { Metadata } from 'next';
import Link from 'next/link';
import { Suspense } from 'react';
import { requireActor } from '@/lib/auth/session';
import { BlockSkeleton } from '@/components/ui/Skeleton';
import { Desk } from './_components/Desk';
import { FollowUpRate } from './_components/FollowUpRate';

export const metadata: Metadata = { title: 'Recall desk' };

export default async function DeskPage() {
  await requireActor('recall.manage', '/desk');
  return (
    <div className="space-y-6">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl">Recall desk</h1>
          <p className="mt-1 text-ink-700">Who is due, who was invited, who replied, and who is slipping away.</p>
        </div>
        <Link href="/desk/policy" className="btn-secondary no-underline">
          Reminder policy
        </Link>
      </div>
      <Suspense fallback={<BlockSkeleton label="Loading the desk" />}>
        <Desk />
      </Suspense>
      <FollowUpRate />
    </div>
  );
}

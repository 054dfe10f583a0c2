import type { Metadata } from 'next';
import Link from 'next/link';
import { z } from 'zod';
import { requireActor } from '@/lib/auth/session';
import { listAuditEvents } from '@/lib/services/audit';
import { Paging } from '@/lib/schemas/paging';
import { Pager } from '@/components/ui/Pager';
import { AuditTable } from './AuditTable';

export const metadata: Metadata = { title: 'Audit trail' };

const FILTERS = [
  { value: '', label: 'Everything' },
  { value: 'auth.', label: 'Sign-ins' },
  { value: 'team.', label: 'Team and roles' },
  { value: 'audit.', label: 'Audit trail reads' },
];

const Query = Paging.extend({ action: z.string().max(80).regex(/^[a-z_.]*$/).optional().catch(undefined) }).catch({ page: 1, pageSize: 50 });

export default async function AuditPage({ searchParams }: { searchParams: Promise<Record<string, string>> }) {
  const { em, actor } = await requireActor('audit.read', '/team/audit');
  const q = Query.parse(await searchParams);
  const data = await listAuditEvents(em, actor, q);
  return (
    <div className="space-y-6">
      <div>
        <p className="text-sm">
          <Link href="/team">← Team</Link>
        </p>
        <h1 className="text-3xl">Audit trail</h1>
        <p className="mt-1 text-ink-700">Every sign-in, failed sign-in, invitation, role change and read of patient data in {actor.practiceName}, newest first.</p>
      </div>
      <nav aria-label="Filter" className="flex flex-wrap gap-2">
        {FILTERS.map((f) => {
          const active = (q.action ?? '') === f.value;
          return (
            <Link
              key={f.value}
              href={f.value ? `/team/audit?action=${f.value}` : '/team/audit'}
              aria-current={active ? 'true' : undefined}
              className={`rounded-full border px-3 py-1 text-sm no-underline ${active ? 'border-dura-700 bg-dura-700 text-white' : 'border-bone-400 bg-white text-ink-700'}`}
            >
              {f.label}
            </Link>
          );
        })}
      </nav>
      {data.rows.length === 0 ? (
        <p className="card text-ink-700">Nothing recorded for this filter yet. Events appear here as people sign in and work.</p>
      ) : (
        <AuditTable rows={data.rows} />
      )}
      <Pager page={data.page} pageSize={data.pageSize} total={data.total} basePath="/team/audit" query={{ action: q.action }} />
    </div>
  );
}

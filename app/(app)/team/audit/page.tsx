import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { auditPeople, listAuditEvents, type AuditPage as AuditPageData } from '@/lib/services/audit';
import { ValidationError } from '@/lib/services/errors';
import { ACTION_GROUPS, RECORD_KINDS } from '@/lib/audit/words';
import { Pager } from '@/components/ui/Pager';
import { Notice } from '@/components/ui/Notice';
import { AuditTable } from './AuditTable';

export const metadata: Metadata = { title: 'Audit trail' };

const FILTER_KEYS = ['person', 'action', 'record', 'ref', 'from', 'to'] as const;

export default async function AuditPage({ searchParams }: { searchParams: Promise<Record<string, string | string[]>> }) {
  const { em, actor } = await requireActor('audit.read', '/team/audit');
  const params = await searchParams;
  const one = (k: string) => (typeof params[k] === 'string' ? (params[k] as string) : '');
  const filters = Object.fromEntries(FILTER_KEYS.map((k) => [k, one(k)])) as Record<(typeof FILTER_KEYS)[number], string>;
  const people = await auditPeople(em, actor);
  let data: AuditPageData | null = null;
  let problems: Record<string, string[]> = {};
  try {
    data = await listAuditEvents(em, actor, { ...filters, page: one('page') || undefined, pageSize: one('pageSize') || undefined });
  } catch (e) {
    if (!(e instanceof ValidationError)) throw e;
    problems = e.fieldErrors ?? {};
  }
  const query = Object.fromEntries(Object.entries(filters).filter(([, v]) => v)) as Record<string, string>;
  const exportHref = `/api/audit/export?${new URLSearchParams(query).toString()}`;
  const problem = (k: string) => problems[k]?.[0];
  const field = (k: string) => ({
    id: `audit-${k}`,
    name: k,
    className: 'field-input',
    'aria-invalid': problem(k) ? true : undefined,
    'aria-describedby': problem(k) ? `audit-${k}-error` : undefined,
  });
  const error = (k: string) =>
    problem(k) && (
      <p id={`audit-${k}-error`} className="field-error">
        {problem(k)}
      </p>
    );
  return (
    <div className="space-y-6">
      <div>
        <p className="text-sm">
          <Link href="/team">← Team</Link>
        </p>
        <h1 className="text-3xl">Audit trail</h1>
        <p className="mt-1 text-ink-700">
          Every sign-in, failed sign-in, invitation, role change and read or change of patient data in {actor.practiceName}, newest first. Records are named by
          their kind and a short reference (the start of their id); patients’ names are shown only to readers who may see patient data.
        </p>
      </div>
      <form method="get" action="/team/audit" aria-label="Filter the audit trail" className="card grid gap-4 sm:grid-cols-2 lg:grid-cols-3">
        <div>
          <label htmlFor="audit-person" className="field-label">
            Person
          </label>
          <select {...field('person')} defaultValue={filters.person}>
            <option value="">Everyone</option>
            {people.map((p) => (
              <option key={p.value} value={p.value}>
                {p.label}
              </option>
            ))}
          </select>
          {error('person')}
        </div>
        <div>
          <label htmlFor="audit-action" className="field-label">
            Action
          </label>
          <select {...field('action')} defaultValue={filters.action}>
            <option value="">Everything</option>
            {ACTION_GROUPS.map((g) => (
              <optgroup key={g.prefix} label={g.label}>
                <option value={g.prefix}>{g.label}: all</option>
                {Object.entries(g.actions).map(([code, words]) => (
                  <option key={code} value={code}>
                    {words}
                  </option>
                ))}
              </optgroup>
            ))}
          </select>
          {error('action')}
        </div>
        <div className="grid grid-cols-2 gap-2">
          <div>
            <label htmlFor="audit-record" className="field-label">
              Record
            </label>
            <select {...field('record')} defaultValue={filters.record}>
              <option value="">Any kind</option>
              {Object.entries(RECORD_KINDS).map(([kind, words]) => (
                <option key={kind} value={kind}>
                  {words}
                </option>
              ))}
            </select>
            {error('record')}
          </div>
          <div>
            <label htmlFor="audit-ref" className="field-label">
              Reference
            </label>
            <input {...field('ref')} defaultValue={filters.ref} placeholder="e.g. 3f2a9c1b" autoComplete="off" spellCheck={false} />
            {error('ref')}
          </div>
        </div>
        <div>
          <label htmlFor="audit-from" className="field-label">
            From (day)
          </label>
          <input {...field('from')} type="date" defaultValue={filters.from} />
          {error('from')}
        </div>
        <div>
          <label htmlFor="audit-to" className="field-label">
            To (day, included)
          </label>
          <input {...field('to')} type="date" defaultValue={filters.to} />
          {error('to')}
        </div>
        <div className="flex flex-wrap items-end gap-3">
          <button type="submit" className="btn-primary">
            Show events
          </button>
          <Link href="/team/audit">Clear filters</Link>
        </div>
      </form>
      {data === null ? (
        <Notice tone="alert">Some filters need attention (see beside each). Nothing is listed until they are corrected.</Notice>
      ) : (
        <>
          <div className="flex flex-wrap items-center justify-between gap-3">
            <p className="text-sm text-ink-700" role="status">
              {data.total === 1 ? '1 event' : `${data.total} events`}
              {Object.keys(query).length ? ' match these filters.' : ' recorded.'}
            </p>
            {data.total > 0 && (
              <a href={exportHref} className="btn-secondary no-underline" download>
                Download CSV
              </a>
            )}
          </div>
          {data.rows.length === 0 ? (
            <p className="card text-ink-700">Nothing recorded for these filters. Events appear here as people sign in and work; widen the days or clear a filter.</p>
          ) : (
            <AuditTable rows={data.rows} />
          )}
          <Pager page={data.page} pageSize={data.pageSize} total={data.total} basePath="/team/audit" query={query} />
        </>
      )}
    </div>
  );
}

'use client';
import Link from 'next/link';
import { usePathname, useRouter, useSearchParams } from 'next/navigation';
import { useMemo } from 'react';
import { keepPreviousData, useQuery } from '@tanstack/react-query';
import { createColumnHelper, getCoreRowModel, useReactTable, type SortingState } from '@tanstack/react-table';
import { TableView } from '@/components/ui/TableView';
import { optionsOf } from '@/components/ui/Select';
import { PatientCell } from '@/components/ui/PatientCell';
import type { CasePage, CaseRow } from '@/lib/services/cases';
import { CASE_KINDS, CASE_KIND_LABELS } from '@/lib/registry/case-kinds';
import { VISIT_STATUSES, VISIT_STATUS_LABELS } from '@/lib/recall/status';
import { FILL_LENGTH_LABELS } from '@/lib/scoring';
import { TOOTH_GROUPS } from '@/lib/teeth';
import { OutcomeBadge, VisitStatusBadge } from '@/components/ui/StateBadge';
import { TableSkeleton } from '@/components/ui/Skeleton';
import { Notice } from '@/components/ui/Notice';
import { EmptyState } from '@/components/ui/EmptyState';
import { fmtDate } from '@/components/ui/format';
import { PagerButtons, pageCount } from '@/components/ui/Pager';
import type { Option } from './options';

const TOOTH_GROUP_OPTIONS = optionsOf(TOOTH_GROUPS, { incisor: 'Incisors', canine: 'Canines', premolar: 'Premolars', molar: 'Molars' });

/** Filters live in the URL: a filtered list can be bookmarked, shared and reloaded. */
const FILTER_KEYS = ['q', 'operator', 'kind', 'toothGroup', 'visitStatus', 'fillLength', 'completedFrom', 'completedTo', 'dueFrom', 'dueTo', 'stage'] as const;

export function CasesTable({ clinicians, canImport, canWrite }: { clinicians: Option[]; canImport: boolean; canWrite: boolean }) {
  const router = useRouter();
  const pathname = usePathname();
  const params = useSearchParams();
  const query = params.toString();
  const sort = params.get('sort') ?? 'completionDate';
  const dir = (params.get('dir') ?? 'desc') as 'asc' | 'desc';
  const page = Number(params.get('page') ?? '1') || 1;
  const filtered = FILTER_KEYS.some((k) => params.get(k));

  const { data, isPending, isFetching, isPlaceholderData, error } = useQuery({
    queryKey: ['cases', query],
    queryFn: async (): Promise<CasePage> => {
      const res = await fetch(`/api/cases?${query}`);
      const body = await res.json();
      if (!res.ok) throw new Error(body.message ?? 'The cases could not be loaded.');
      return body;
    },
    placeholderData: keepPreviousData,
  });

  const setParams = (changes: Record<string, string | null>, resetPage = true) => {
    const next = new URLSearchParams(params.toString());
    for (const [k, v] of Object.entries(changes)) {
      if (v === null || v === '') next.delete(k);
      else next.set(k, v);
    }
    if (resetPage) next.delete('page');
    router.replace(`${pathname}?${next.toString()}`, { scroll: false });
  };

  const columns = useMemo(() => {
    const c = createColumnHelper<CaseRow>();
    return [
      c.accessor((r) => r.patient.name, {
        id: 'patient',
        header: 'Patient',
        cell: (i) => <PatientCell id={i.row.original.patient.id} name={i.getValue()} registryNumber={i.row.original.patient.registryNumber} />,
      }),
      c.accessor('tooth', {
        id: 'tooth',
        header: () => data?.toothLabel ?? 'Tooth',
        cell: (i) => (
          <Link href={`/cases/${i.row.original.id}`} title={i.row.original.toothName} className="font-semibold">
            {i.getValue()}
            <span className="sr-only"> ({i.row.original.toothName})</span>
          </Link>
        ),
      }),
      c.accessor('kindLabel', { id: 'kind', header: 'Treatment' }),
      c.accessor((r) => r.operator.name ?? '—', { id: 'operator', header: 'Operator' }),
      c.accessor('completionDate', { id: 'completionDate', header: 'Completed', cell: (i) => (i.getValue() ? fmtDate(i.getValue()) : 'In progress') }),
      c.accessor('fillLengthClass', {
        id: 'fillLength',
        header: 'Fill length',
        enableSorting: false,
        cell: (i) => (i.getValue() ? FILL_LENGTH_LABELS[i.getValue()!] : '—'),
      }),
      c.accessor('nextVisit', {
        id: 'nextVisit',
        header: 'Next visit',
        cell: (i) => {
          const v = i.getValue();
          return v ? (
            <div className="space-y-1">
              <div>{fmtDate(v.date)}</div>
              <VisitStatusBadge status={v.status} />
            </div>
          ) : (
            '—'
          );
        },
      }),
      c.accessor('currentOutcome', { id: 'outcome', header: 'Outcome', enableSorting: false, cell: (i) => <OutcomeBadge outcome={i.getValue()} /> }),
    ];
  }, [data?.toothLabel]);

  const sorting: SortingState = [{ id: sort, desc: dir === 'desc' }];
  const table = useReactTable({
    data: data?.rows ?? [],
    columns,
    getCoreRowModel: getCoreRowModel(),
    getRowId: (r) => r.id,
    manualSorting: true,
    manualPagination: true,
    state: { sorting },
    onSortingChange: (updater) => {
      const next = typeof updater === 'function' ? updater(sorting) : updater;
      const s = next[0];
      setParams({ sort: s?.id ?? null, dir: s ? (s.desc ? 'desc' : 'asc') : null });
    },
  });
  const sortable = new Set(['patient', 'tooth', 'kind', 'operator', 'completionDate', 'nextVisit']);

  return (
    <div className="space-y-4">
      <form
        role="search"
        aria-label="Filter cases"
        className="grid gap-3 rounded-lg border border-bone-200 bg-white p-4 md:grid-cols-4"
        onSubmit={(e) => {
          e.preventDefault();
          const q = new FormData(e.currentTarget).get('q');
          setParams({ q: typeof q === 'string' ? q : null });
        }}
      >
        <div className="md:col-span-2">
          <label htmlFor="case-search" className="field-label">
            Patient name or registry number
          </label>
          <div className="flex gap-2">
            <input id="case-search" name="q" defaultValue={params.get('q') ?? ''} className="field-input" placeholder="e.g. Halloran or R-10234" />
            <button type="submit" className="btn-secondary">
              Search
            </button>
          </div>
        </div>
        <FilterSelect label="Operator" value={params.get('operator')} options={clinicians} onChange={(v) => setParams({ operator: v })} />
        <FilterSelect label="Treatment" value={params.get('kind')} options={optionsOf(CASE_KINDS, CASE_KIND_LABELS)} onChange={(v) => setParams({ kind: v })} />
        <FilterSelect label="Tooth group" value={params.get('toothGroup')} options={TOOTH_GROUP_OPTIONS} onChange={(v) => setParams({ toothGroup: v })} />
        <FilterSelect
          label="Visit status"
          value={params.get('visitStatus')}
          options={optionsOf(VISIT_STATUSES, VISIT_STATUS_LABELS)}
          onChange={(v) => setParams({ visitStatus: v })}
        />
        <FilterDate label="Completed from" value={params.get('completedFrom')} onChange={(v) => setParams({ completedFrom: v })} />
        <FilterDate label="Completed to" value={params.get('completedTo')} onChange={(v) => setParams({ completedTo: v })} />
        <FilterDate label="Visit due from" value={params.get('dueFrom')} onChange={(v) => setParams({ dueFrom: v })} />
        <FilterDate label="Visit due to" value={params.get('dueTo')} onChange={(v) => setParams({ dueTo: v })} />
        {filtered && (
          <div className="flex items-end">
            <button type="button" className="btn-secondary" onClick={() => router.replace(pathname)}>
              Clear filters
            </button>
          </div>
        )}
      </form>

      {error ? (
        <Notice tone="alert">{(error as Error).message}</Notice>
      ) : isPending ? (
        <TableSkeleton label="Loading cases" />
      ) : data && data.total === 0 ? (
        filtered ? (
          <EmptyState title="No case matches these filters">Change or clear the filters to see more cases.</EmptyState>
        ) : (
          <EmptyState
            title="No cases yet"
            action={canWrite ? { href: '/patients', label: 'Record the first case' } : canImport ? { href: '/cases/import', label: 'Import past cases' } : undefined}
          >
            Cases are the treated teeth of the practice. Each completed case gets a recall plan, and its follow-up reviews show whether it healed.
          </EmptyState>
        )
      ) : (
        <>
          <p className="text-sm text-ink-700" aria-live="polite">
            {data!.total.toLocaleString('en-GB')} case{data!.total === 1 ? '' : 's'}
            {isFetching ? ' · updating…' : ''}
          </p>
          <TableView
            table={table}
            label="Cases"
            busy={isPlaceholderData}
            rowProps={() => ({ className: 'hover:bg-bone-50' })}
            header={(id, content) => {
              if (!sortable.has(id)) return { content };
              const active = sort === id;
              return {
                ariaSort: active ? (dir === 'asc' ? 'ascending' : 'descending') : undefined,
                content: (
                  <button type="button" className="inline-flex items-center gap-1 uppercase" onClick={() => setParams({ sort: id, dir: active && dir === 'desc' ? 'asc' : 'desc' })}>
                    {content}
                    <span aria-hidden="true">{active ? (dir === 'asc' ? '▲' : '▼') : '↕'}</span>
                  </button>
                ),
              };
            }}
          />
          <PagerButtons page={page} pages={data ? pageCount(data.total, data.pageSize) : 1} onPage={(p) => setParams({ page: String(p) }, false)} />
        </>
      )}
    </div>
  );
}

/** A filter control's id, from its label ("Visit due from" → filter-visit-due-from). */
const filterId = (label: string) => `filter-${label.toLowerCase().replace(/\s+/g, '-')}`;

function FilterSelect({ label, value, options, onChange }: { label: string; value: string | null; options: Option[]; onChange: (v: string | null) => void }) {
  const id = filterId(label);
  return (
    <div>
      <label htmlFor={id} className="field-label">
        {label}
      </label>
      <select id={id} className="field-input" value={value ?? ''} onChange={(e) => onChange(e.target.value || null)}>
        <option value="">All</option>
        {options.map((o) => (
          <option key={o.value} value={o.value}>
            {o.label}
          </option>
        ))}
      </select>
    </div>
  );
}

function FilterDate({ label, value, onChange }: { label: string; value: string | null; onChange: (v: string | null) => void }) {
  const id = filterId(label);
  return (
    <div>
      <label htmlFor={id} className="field-label">
        {label}
      </label>
      <input id={id} type="date" className="field-input" value={value ?? ''} onChange={(e) => onChange(e.target.value || null)} />
    </div>
  );
}

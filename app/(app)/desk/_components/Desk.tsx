'use client';
import Link from 'next/link';
import { usePathname, useRouter, useSearchParams } from 'next/navigation';
import { useMemo, useRef, useState } from 'react';
import { useFocusAfterRender } from '@/components/ui/useFocusAfterRender';
import { keepPreviousData, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { createColumnHelper, getCoreRowModel, useReactTable, type RowSelectionState } from '@tanstack/react-table';
import type { DeskQueues, DeskRow, DeskRowsPage, ActionResponse } from '@/lib/services/recall-desk';
import { readDeskAddress, type DeskQueue } from '@/lib/recall/desk-address';
import { REMINDER_STEP_LABELS } from '@/lib/recall/steps';
import { MISSED_REASONS, MISSED_REASON_LABELS, type MissedReason } from '@/lib/recall/status';
import { TableView } from '@/components/ui/TableView';
import { PatientCell } from '@/components/ui/PatientCell';
import { TableSkeleton } from '@/components/ui/Skeleton';
import { VisitStatusBadge, StateBadge } from '@/components/ui/StateBadge';
import { Notice } from '@/components/ui/Notice';
import { EmptyState } from '@/components/ui/EmptyState';
import { PagerButtons, pageCount } from '@/components/ui/Pager';
import { ContactLog } from './ContactLog';
import { fmtDate, fmtDateTime } from '@/components/ui/format';
import { getJson, postJson } from './api';

const EMPTY_TEXT: Record<DeskQueue, string> = {
  due_soon: 'No visit falls due in the next 30 days. Completed cases get their visits from the recall policy.',
  overdue: 'No visit is past its due date without a time booked or proposed.',
  call: 'Nobody to phone: every patient due for an invitation can be e-mailed, or has a time.',
  awaiting_reply: 'Nobody is waiting to answer an invitation.',
  replied: 'No reply waits for you. Patients answer through the link in their invitation.',
  delivery_failed: 'Every reminder was delivered.',
  missed: 'No visit has been missed.',
  this_month: 'No visit is due this month.',
};

export function Desk() {
  const router = useRouter();
  const pathname = usePathname();
  const params = useSearchParams();
  const clinicians = useQuery({ queryKey: ['clinicians'], queryFn: () => getJson<{ clinicians: { id: string; name: string | null; email: string }[] }>('/api/clinicians') });
  // A hand-edited or stale address shows the desk, saying what it ignored (the API would answer 422).
  const { queue, page, clinician, ignored } = readDeskAddress((name) => params.get(name), clinicians.data?.clinicians.map((c) => c.id));
  const forClinician = clinician ? `&clinician=${encodeURIComponent(clinician)}` : '';
  const qc = useQueryClient();
  const [selection, setSelection] = useState<RowSelectionState>({});
  const [openLog, setOpenLog] = useState<string | null>(null);
  const [outcome, setOutcome] = useState<{ tone: 'ok' | 'alert' | 'info'; lines: string[] } | null>(null);
  // After an action on the selection its button is disabled (nothing is selected any more), which
  // takes the focus from a keyboard user: the focus goes to the action's outcome instead.
  const outcomeBox = useRef<HTMLDivElement>(null);
  const focusOutcome = useFocusAfterRender(() => outcomeBox.current);

  const queues = useQuery({
    queryKey: ['desk-queues', clinician],
    queryFn: () => getJson<DeskQueues>(`/api/recall/queues${clinician ? `?clinician=${encodeURIComponent(clinician)}` : ''}`),
  });
  const rows = useQuery({
    queryKey: ['desk-rows', queue, page, clinician],
    queryFn: () => getJson<DeskRowsPage>(`/api/recall/visits?queue=${queue}&page=${page}&pageSize=25${forClinician}`),
    placeholderData: keepPreviousData,
  });

  /** The desk's address for a queue, page and clinician (what readDeskAddress reads back). */
  const deskHref = (q: DeskQueue, p = 1, who = clinician) => {
    const next = new URLSearchParams(params.toString());
    next.set('queue', q);
    if (p > 1) next.set('page', String(p));
    else next.delete('page');
    if (who) next.set('clinician', who);
    else next.delete('clinician');
    return `${pathname}?${next.toString()}`;
  };
  const go = (q: DeskQueue, p = 1, who = clinician) => {
    setSelection({});
    setOutcome(null);
    router.replace(deskHref(q, p, who), { scroll: false });
  };

  const lastPage = rows.data ? pageCount(rows.data.total, rows.data.pageSize) : 1;

  const act = useMutation({
    mutationFn: ({ url, body }: { url: string; body: unknown }) => postJson<ActionResponse>(url, body),
    onSuccess: (res) => {
      const failed = res.results.filter((r) => !r.ok);
      focusOutcome();
      setOutcome({
        tone: failed.length ? (failed.length === res.results.length ? 'alert' : 'info') : 'ok',
        lines: [
          ...res.results.map((r) => `${r.visit}: ${r.message}`),
          ...(res.deferred ? ['The queue did not answer: the reminders are saved and go out with the next scan.'] : []),
        ],
      });
      setSelection({});
      qc.invalidateQueries({ queryKey: ['desk-queues'] });
      qc.invalidateQueries({ queryKey: ['desk-rows'] });
      qc.invalidateQueries({ queryKey: ['desk-log'] });
    },
    onError: (e) => {
      focusOutcome();
      setOutcome({ tone: 'alert', lines: [(e as Error).message] });
    },
  });

  const columns = useMemo(() => {
    const c = createColumnHelper<DeskRow>();
    return [
      c.display({
        id: 'select',
        header: ({ table }) => (
          <input
            type="checkbox"
            aria-label="Select every visit on this page"
            className="h-4 w-4 accent-dura-700"
            checked={table.getIsAllRowsSelected()}
            onChange={table.getToggleAllRowsSelectedHandler()}
          />
        ),
        cell: ({ row }) => (
          <input
            type="checkbox"
            aria-label={`Select ${row.original.patient.name}, tooth ${row.original.tooth}, ${row.original.milestone} months`}
            className="h-4 w-4 accent-dura-700"
            checked={row.getIsSelected()}
            onChange={row.getToggleSelectedHandler()}
          />
        ),
      }),
      c.accessor((r) => r.patient.name, {
        id: 'patient',
        header: 'Patient',
        cell: (i) => (
          <PatientCell
            id={i.row.original.patient.id}
            name={i.getValue()}
            registryNumber={i.row.original.patient.registryNumber}
            extra={
              <>
                {i.row.original.patient.phone ? ` · ${i.row.original.patient.phone}` : ''}
                {i.row.original.patient.canEmail ? '' : ` · ${i.row.original.patient.recallContact ? `by ${i.row.original.patient.channel}, no e-mail` : 'no recall-contact consent'}`}
              </>
            }
          />
        ),
      }),
      c.accessor('tooth', {
        header: () => rows.data?.toothLabel ?? 'Tooth',
        meta: { label: rows.data?.toothLabel ?? 'Tooth' },
        cell: (i) => <Link href={`/cases/${i.row.original.caseId}`}>{i.getValue()}</Link>,
      }),
      c.accessor('milestone', { header: 'Visit', cell: (i) => `${i.getValue()} months` }),
      c.accessor('dueDate', {
        header: 'Due',
        cell: (i) => (
          <div>
            {fmtDate(i.getValue())}
            {i.row.original.bookedDate && <div className="text-xs text-ink-500">booked {fmtDate(i.row.original.bookedDate)}</div>}
            {!i.row.original.bookedDate && i.row.original.proposedStart && (
              <div className="text-xs text-ink-500">proposed {fmtDateTime(i.row.original.proposedStart)}</div>
            )}
          </div>
        ),
      }),
      c.accessor('status', {
        header: 'Status',
        cell: (i) => (
          <div className="space-y-1">
            <VisitStatusBadge status={i.getValue()} />
            {i.row.original.deliveryFailed && <StateBadge tone="alert" icon="!" label="Delivery failed" />}
          </div>
        ),
      }),
      c.accessor('reminders', {
        header: 'Messages',
        cell: (i) =>
          i.getValue().length ? (
            <ul className="text-xs">
              {i.getValue().map((m) => (
                <li key={m.step}>
                  {m.stepLabel}: {m.status}
                  {m.sentAt ? ` ${fmtDate(m.sentAt)}` : ''}
                </li>
              ))}
            </ul>
          ) : (
            <span className="text-xs text-ink-500">None yet</span>
          ),
      }),
      c.accessor('lastContact', {
        header: 'Last contact',
        cell: (i) => {
          const l = i.getValue();
          return (
            <div className="text-xs">
              {l ? (
                <>
                  <div>{fmtDateTime(l.at)}</div>
                  <div className="text-ink-500">{l.answer ? `reply: ${l.answer.replace('_', ' ')}` : l.kind.replace('_', ' ')}</div>
                </>
              ) : (
                <div className="text-ink-500">No contact yet</div>
              )}
              <button type="button" className="mt-1 block text-dura-700 underline" onClick={() => setOpenLog(i.row.original.visitId)}>
                Contact log
              </button>
            </div>
          );
        },
      }),
    ];
  }, [rows.data?.toothLabel]);

  const table = useReactTable({
    data: rows.data?.rows ?? [],
    columns,
    getCoreRowModel: getCoreRowModel(),
    getRowId: (r) => r.visitId,
    enableRowSelection: true,
    state: { rowSelection: selection },
    onRowSelectionChange: setSelection,
  });
  const selected = Object.keys(selection).filter((k) => selection[k]);

  return (
    <div className="space-y-4">
      {ignored.length > 0 && (
        <Notice tone="info">
          <ul>
            {ignored.map((line) => (
              <li key={line}>{line}</li>
            ))}
          </ul>
        </Notice>
      )}
      {queues.error && <Notice tone="alert">{(queues.error as Error).message}</Notice>}
      <div className="flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="desk-clinician" className="field-label">
            Clinician
          </label>
          <select id="desk-clinician" className="field-input" value={clinician} onChange={(e) => go(queue, 1, e.target.value)}>
            <option value="">Every clinician</option>
            {(clinicians.data?.clinicians ?? []).map((c) => (
              <option key={c.id} value={c.id}>
                {c.name ?? c.email}
              </option>
            ))}
          </select>
        </div>
        <Link href={`/desk/calls${clinician ? `?clinician=${encodeURIComponent(clinician)}` : ''}`} className="btn-secondary no-underline" target="_blank">
          Print the call list
        </Link>
      </div>
      <nav aria-label="Work queues" className="grid grid-cols-2 gap-2 md:grid-cols-4 xl:grid-cols-8">
        {(queues.data?.queues ?? []).map((q) => (
          <button
            key={q.key}
            type="button"
            onClick={() => go(q.key)}
            aria-current={q.key === queue ? 'true' : undefined}
            title={q.definition}
            className={`rounded-lg border p-3 text-left ${q.key === queue ? 'border-dura-700 bg-dura-50' : 'border-bone-300 bg-white hover:border-dura-300'}`}
          >
            <span className="block text-2xl font-semibold tabular-nums">{q.count}</span>
            <span className="block text-sm">{q.label}</span>
          </button>
        ))}
        {queues.isPending && <span className="text-sm text-ink-500">Counting…</span>}
      </nav>
      <p className="text-sm text-ink-700">{queues.data?.queues.find((q) => q.key === queue)?.definition}</p>

      <BulkActions
        count={selected.length}
        busy={act.isPending}
        onSend={() => act.mutate({ url: '/api/recall/send', body: { visitIds: selected } })}
        onMark={(status, reason) => act.mutate({ url: '/api/recall/mark', body: { visitIds: selected, status, ...(reason ? { reason } : {}) } })}
        onBook={(start, mode, sendNow) => act.mutate({ url: '/api/recall/book', body: { visitIds: selected, start, mode, sendNow } })}
      />
      {outcome && (
        <div ref={outcomeBox} tabIndex={-1} className="rounded-md">
          <Notice tone={outcome.tone}>
            <ul>
              {outcome.lines.map((l, i) => (
                <li key={i}>{l}</li>
              ))}
            </ul>
          </Notice>
        </div>
      )}

      {rows.error ? (
        <Notice tone="alert">{(rows.error as Error).message}</Notice>
      ) : rows.isPending ? (
        <TableSkeleton label="Loading visits" columns={7} />
      ) : rows.data && rows.data.total === 0 ? (
        <EmptyState title="Nothing in this queue">{EMPTY_TEXT[queue]}</EmptyState>
      ) : rows.data && page > lastPage ? (
        // An address from a bookmark or an older list can ask for a page the queue no longer has.
        <EmptyState title="Past the last page" action={{ href: deskHref(queue, lastPage), label: `Go to page ${lastPage}` }}>
          This queue has {rows.data.total} {rows.data.total === 1 ? 'visit' : 'visits'} on {lastPage} {lastPage === 1 ? 'page' : 'pages'}; the address asked for page {page}.
        </EmptyState>
      ) : (
        <>
          <TableView stack table={table} label="Visits in this queue" busy={rows.isPlaceholderData} rowProps={(row) => ({ 'data-testid': `desk-row-${row.original.patient.registryNumber}-${row.original.milestone}` })} />
          <PagerButtons
            page={page}
            pages={lastPage}
            onPage={(p) => go(queue, p)}
            summary={` · ${rows.data?.total ?? ''} visits`}
          />
        </>
      )}
      {openLog && <ContactLog visitId={openLog} onClose={() => setOpenLog(null)} />}
      <p className="text-xs text-ink-500">Reminders go only to patients who agreed to recall contact; each carries an unsubscribe link. Steps: {Object.values(REMINDER_STEP_LABELS).join(', ')}.</p>
    </div>
  );
}

function BulkActions(props: {
  count: number;
  busy: boolean;
  onSend: () => void;
  onMark: (status: 'attended' | 'missed', reason?: MissedReason) => void;
  onBook: (startIso: string, mode: 'propose' | 'phone', sendNow: boolean) => void;
}) {
  const [when, setWhen] = useState('');
  const [mode, setMode] = useState<'propose' | 'phone'>('propose');
  const [missedReason, setMissedReason] = useState<MissedReason | ''>('');
  const none = props.count === 0 || props.busy;
  return (
    <section aria-label="Act on the selected visits" className="flex flex-wrap items-end gap-3 rounded-lg border border-bone-200 bg-white p-3">
      <p className="w-full text-sm text-ink-700 md:w-auto" aria-live="polite">
        {props.count === 0 ? 'Select visits to act on them.' : `${props.count} selected`}
      </p>
      <button type="button" className="btn-primary" disabled={none} onClick={props.onSend}>
        Send invitations now
      </button>
      <button type="button" className="btn-secondary" disabled={none} onClick={() => props.onMark('attended')}>
        Mark attended
      </button>
      <div className="flex flex-wrap items-end gap-2">
        <div>
          <label htmlFor="missed-reason" className="field-label">
            Missed because
          </label>
          <select id="missed-reason" className="field-input" value={missedReason} onChange={(e) => setMissedReason(e.target.value as MissedReason)}>
            <option value="">Choose…</option>
            {MISSED_REASONS.map((r) => (
              <option key={r} value={r}>
                {MISSED_REASON_LABELS[r]}
              </option>
            ))}
          </select>
        </div>
        <button type="button" className="btn-secondary" disabled={none || !missedReason} onClick={() => missedReason && props.onMark('missed', missedReason)}>
          Mark missed
        </button>
      </div>
      <div className="flex flex-wrap items-end gap-2 border-l border-bone-300 pl-3">
        <div>
          <label htmlFor="book-when" className="field-label">
            Appointment
          </label>
          <input id="book-when" type="datetime-local" className="field-input" value={when} onChange={(e) => setWhen(e.target.value)} />
        </div>
        <div>
          <label htmlFor="book-mode" className="field-label">
            How
          </label>
          <select id="book-mode" className="field-input" value={mode} onChange={(e) => setMode(e.target.value as 'propose' | 'phone')}>
            <option value="propose">Propose by e-mail (with a calendar file)</option>
            <option value="phone">Agreed by phone (confirmed)</option>
          </select>
        </div>
        <button
          type="button"
          className="btn-secondary"
          disabled={none || !when}
          onClick={() => props.onBook(new Date(when).toISOString(), mode, mode === 'propose')}
        >
          Book this date
        </button>
      </div>
    </section>
  );
}

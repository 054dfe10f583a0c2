'use client';
import Link from 'next/link';
import { createColumnHelper, getCoreRowModel, useReactTable } from '@tanstack/react-table';
import { TableView } from '@/components/ui/TableView';
import { fmtDateTime } from '@/components/ui/format';
import type { AuditRow } from '@/lib/services/audit';

const c = createColumnHelper<AuditRow>();
const columns = [
  c.accessor('at', { header: 'When', cell: (i) => <time dateTime={i.getValue()} className="whitespace-nowrap">{fmtDateTime(i.getValue())}</time> }),
  c.accessor('who', {
    header: 'Who',
    cell: (i) => {
      const r = i.row.original;
      if (!r.who) return <span className="text-ink-600">Lamina</span>;
      return r.whoEmail && r.whoEmail !== r.who ? <span title={r.whoEmail}>{r.who}</span> : <span className="break-all">{r.who}</span>;
    },
  }),
  c.accessor('what', {
    header: 'What',
    cell: (i) => {
      const r = i.row.original;
      return (
        <>
          <span>{r.what}</span>
          {r.detail && <span className="block max-w-md text-xs text-ink-600">{r.detail}</span>}
        </>
      );
    },
  }),
  c.accessor('record', {
    header: 'Record',
    cell: (i) => {
      const rec = i.getValue();
      if (!rec) return <span className="text-ink-400">—</span>;
      const label = (
        <>
          {rec.kindWords} <span className="font-mono text-xs">{rec.ref}</span>
          {rec.name && <span className="block">{rec.name}</span>}
        </>
      );
      return rec.href ? <Link href={rec.href}>{label}</Link> : <span>{label}</span>;
    },
  }),
  c.accessor('ip', { header: 'From', cell: (i) => <span className="font-mono text-xs">{i.getValue() ?? '—'}</span> }),
];

export function AuditTable({ rows }: { rows: AuditRow[] }) {
  const table = useReactTable({ data: rows, columns, getCoreRowModel: getCoreRowModel(), getRowId: (r) => r.id });
  return <TableView table={table} label="Audit events" />;
}

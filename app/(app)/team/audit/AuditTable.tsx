'use client';
import { createColumnHelper, getCoreRowModel, useReactTable } from '@tanstack/react-table';
import { TableView } from '@/components/ui/TableView';
import { fmtTimestamp } from '@/components/ui/format';
import type { AuditPage } from '@/lib/services/audit';

type Row = AuditPage['rows'][number];
const c = createColumnHelper<Row>();
const columns = [
  c.accessor('at', { header: 'When', cell: (i) => fmtTimestamp(i.getValue()) }),
  c.accessor('actorEmail', { header: 'Who', cell: (i) => i.getValue() ?? 'Lamina' }),
  c.accessor('action', { header: 'What', cell: (i) => <code className="text-xs">{i.getValue()}</code> }),
  c.accessor((r) => (r.entityType ? `${r.entityType} ${r.entityId?.slice(0, 8) ?? ''}` : '—'), { id: 'record', header: 'Record' }),
  c.accessor('ip', { header: 'From', cell: (i) => i.getValue() ?? '—' }),
  c.accessor('detail', {
    header: 'Detail',
    cell: (i) => {
      const d = i.getValue();
      return d ? Object.entries(d).map(([k, v]) => `${k}: ${Array.isArray(v) ? v.join(', ') : String(v)}`).join(' · ') : '';
    },
  }),
];

export function AuditTable({ rows }: { rows: Row[] }) {
  const table = useReactTable({ data: rows, columns, getCoreRowModel: getCoreRowModel(), getRowId: (r) => r.id });
  return <TableView table={table} label="Audit events" />;
}

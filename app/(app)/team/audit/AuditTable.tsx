'use client';
import { createColumnHelper, flexRender, getCoreRowModel, useReactTable } from '@tanstack/react-table';
import type { AuditPage } from '@/lib/services/audit';

type Row = AuditPage['rows'][number];
const c = createColumnHelper<Row>();
const columns = [
  c.accessor('at', { header: 'When', cell: (i) => new Date(i.getValue()).toLocaleString('en-GB') }),
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
  return (
    <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
      <table className="table-dense w-full" aria-label="Audit events">
        <thead>
          {table.getHeaderGroups().map((hg) => (
            <tr key={hg.id}>
              {hg.headers.map((h) => (
                <th key={h.id} scope="col">
                  {flexRender(h.column.columnDef.header, h.getContext())}
                </th>
              ))}
            </tr>
          ))}
        </thead>
        <tbody>
          {table.getRowModel().rows.map((row) => (
            <tr key={row.id}>
              {row.getVisibleCells().map((cell) => (
                <td key={cell.id}>{flexRender(cell.column.columnDef.cell, cell.getContext())}</td>
              ))}
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

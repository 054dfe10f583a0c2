'use client';
import { flexRender, type ColumnDef, type Row, type Table } from '@tanstack/react-table';
import type { HTMLAttributes, ReactNode } from 'react';

/**
 * Draws a TanStack table in Lamina's dense style. `header` may replace a header cell (e.g. a
 * sort button); `rowProps` adds attributes to a row (test ids, highlight). With `stack`, the table
 * becomes a stack of cards below 768 px (`.table-stack` in globals.css), each cell labelled with
 * its column's header (a string header, or `meta.label` where the header is a function).
 */
export function TableView<T>({
  table,
  label,
  header,
  rowProps,
  stack = false,
  busy = false,
}: {
  table: Table<T>;
  label?: string;
  header?: (columnId: string, content: ReactNode) => { content: ReactNode; ariaSort?: 'ascending' | 'descending' };
  rowProps?: (row: Row<T>) => HTMLAttributes<HTMLTableRowElement> & Record<`data-${string}`, string>;
  stack?: boolean;
  /** the rows shown are the previous ones while new ones load: aria-busy tells assistive technology (and tests) to wait */
  busy?: boolean;
}) {
  return (
    <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
      <table className={`table-dense w-full${stack ? ' table-stack' : ''}`} aria-label={label} aria-busy={busy || undefined}>
        <thead>
          {table.getHeaderGroups().map((hg) => (
            <tr key={hg.id}>
              {hg.headers.map((h) => {
                const content = flexRender(h.column.columnDef.header, h.getContext());
                const custom = header?.(h.column.id, content);
                return (
                  <th key={h.id} scope="col" aria-sort={custom?.ariaSort}>
                    {custom ? custom.content : content}
                  </th>
                );
              })}
            </tr>
          ))}
        </thead>
        <tbody>
          {table.getRowModel().rows.map((row) => (
            <tr key={row.id} {...rowProps?.(row)}>
              {row.getVisibleCells().map((cell) => (
                <td key={cell.id} data-label={stack ? columnLabel(cell.column.columnDef) : undefined}>
                  {flexRender(cell.column.columnDef.cell, cell.getContext())}
                </td>
              ))}
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

/** A column's name for a stacked cell: its string header, or `meta.label`. */
function columnLabel<T>(def: ColumnDef<T, unknown>): string | undefined {
  const meta = def.meta as { label?: string } | undefined;
  return meta?.label ?? (typeof def.header === 'string' ? def.header : undefined);
}

'use client';
import type { ImportPreview } from '@/lib/services/import-file';
import { DATE_ORDERS, DATE_ORDER_LABELS, type DateOrder } from '@/lib/import/dates';
import { suggestCodes } from '@/lib/import/mapping';
import type { TemplateColumn } from '@/lib/import/template';

/**
 * The mapping step of both imports (cases and past reviews, issue 16): the file's columns matched to
 * the template's fields, coded values, date order and decimal mark, proposed by the read route and
 * corrected by the user; sent with the file as the multipart field `options`.
 */
export interface Choices {
  sheet: string | null;
  columns: (string | null)[];
  dateOrder: DateOrder | null;
  decimalMark: '.' | ',';
  codes: Record<string, Record<string, string>>;
}

export async function failure(res: Response, fallback: string): Promise<Error> {
  const body = (await res.json().catch(() => ({}))) as { message?: string; fieldErrors?: Record<string, string[]> };
  return new Error(Object.values(body.fieldErrors ?? {})[0]?.[0] ?? body.message ?? fallback);
}

/** POST `url` (/api/cases/import/read or /api/reviews/import/read): the columns, samples and proposals of the file. */
export async function readPreview(url: string, file: File, sheet: string | null): Promise<ImportPreview> {
  const form = new FormData();
  form.set('file', file);
  if (sheet) form.set('sheet', sheet);
  const res = await fetch(url, { method: 'POST', body: form, headers: { Accept: 'application/json' } });
  if (!res.ok) throw await failure(res, 'The file could not be read.');
  return (await res.json()) as ImportPreview;
}

/** The proposed choices, with a code proposed for each value of a coded column that is not a code already. */
export function initialChoices(preview: ImportPreview): Choices {
  const codes: Record<string, Record<string, string>> = structuredClone(preview.proposed.codes);
  preview.proposed.columns.forEach((key, i) => {
    const column = preview.template.columns.find((c) => c.key === key);
    if (!column || column.kind !== 'code') return;
    for (const s of suggestCodes(preview.columns[i]!.values.map((v) => v.value), column)) {
      if (s.match === 'near' && s.code && !codes[column.key]?.[s.value]) codes[column.key] = { ...codes[column.key], [s.value]: s.code };
    }
  });
  return { sheet: preview.sheet, columns: [...preview.proposed.columns], dateOrder: preview.proposed.dateOrder, decimalMark: preview.proposed.decimalMark, codes };
}

export function Mapping({
  idPrefix,
  preview,
  choices,
  onChange,
  onSheet,
}: {
  /** ids and radio-group names of this mapping (two imports share the page) */
  idPrefix: string;
  preview: ImportPreview;
  choices: Choices;
  onChange: (next: Partial<Choices>) => void;
  onSheet: (sheet: string) => void;
}) {
  const byKey = new Map(preview.template.columns.map((c) => [c.key, c]));
  const used = new Map<string, number>();
  for (const k of choices.columns) if (k) used.set(k, (used.get(k) ?? 0) + 1);
  const missing = preview.template.columns.filter((c) => c.required && !used.has(c.key));
  const coded = choices.columns
    .map((key, i) => ({ i, column: key ? byKey.get(key) : undefined }))
    .filter((x): x is { i: number; column: TemplateColumn } => x.column?.kind === 'code');
  const hasDates = choices.columns.some((k) => k && byKey.get(k)?.kind === 'date');
  return (
    <div className="space-y-5" aria-label="Mapping">
      <p className="text-sm text-ink-700">
        {preview.format === 'xlsx' ? 'Excel workbook' : `CSV (${preview.delimiter === ';' ? 'semicolons' : preview.delimiter === '\t' ? 'tabs' : 'commas'})`}:{' '}
        {preview.rows.toLocaleString('en-GB')} row{preview.rows === 1 ? '' : 's'} below the header on line {preview.headerLine}, {preview.columns.length} columns.
        {preview.saved && ' The choices below are the ones your practice saved for files with these columns.'}
      </p>
      {preview.sheets.length > 1 && (
        <div>
          <label htmlFor={`${idPrefix}-sheet`} className="field-label">
            Sheet
          </label>
          <select id={`${idPrefix}-sheet`} className="field-input max-w-xs" value={choices.sheet ?? ''} onChange={(e) => onSheet(e.target.value)}>
            {preview.sheets.map((s) => (
              <option key={s} value={s}>
                {s}
              </option>
            ))}
          </select>
        </div>
      )}

      <fieldset className="space-y-2">
        <legend className="font-medium">Your columns</legend>
        <div className="overflow-x-auto rounded-md border border-bone-200">
          <table className="table-dense table-stack w-full" aria-label="Column mapping">
            <thead>
              <tr>
                <th scope="col">Your column</th>
                <th scope="col">Values seen</th>
                <th scope="col">Lamina field</th>
              </tr>
            </thead>
            <tbody>
              {preview.columns.map((c) => {
                const key = choices.columns[c.index] ?? null;
                const twice = key !== null && (used.get(key) ?? 0) > 1;
                return (
                  <tr key={c.index}>
                    <td data-label="Your column" className="font-medium">
                      {c.header || <span className="text-ink-500">(no name, column {c.index + 1})</span>}
                    </td>
                    <td data-label="Values seen" className="max-w-xs break-words text-ink-700">
                      {c.samples.length ? c.samples.join(' · ') : <span className="text-ink-500">all blank</span>}
                    </td>
                    <td data-label="Lamina field">
                      <select
                        aria-label={`Lamina field for “${c.header}”`}
                        className="field-input min-w-48"
                        value={key ?? ''}
                        aria-invalid={twice || undefined}
                        onChange={(e) => {
                          const columns = [...choices.columns];
                          columns[c.index] = e.target.value || null;
                          onChange({ columns });
                        }}
                      >
                        <option value="">Leave out</option>
                        {preview.template.columns.map((t) => (
                          <option key={t.key} value={t.key}>
                            {t.label}
                            {t.required ? ' *' : ''}
                          </option>
                        ))}
                      </select>
                      {twice ? (
                        <p className="field-error">Another column is mapped to this field too: leave one out.</p>
                      ) : c.proposal.target && c.proposal.target === key ? (
                        <p className="mt-1 text-xs text-ink-500">Proposed: {c.proposal.why}.</p>
                      ) : null}
                    </td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        </div>
        {missing.length > 0 && (
          <p className="text-sm text-ink-700">
            Not in your file (marked * in the list; needed for new patients and cases): {missing.map((m) => m.label).join(', ')}.
          </p>
        )}
      </fieldset>

      <div className="grid gap-5 md:grid-cols-2">
        <fieldset>
          <legend className="field-label">How your dates are written</legend>
          <div className="space-y-1">
            {DATE_ORDERS.map((o) => (
              <label key={o} className="flex items-center gap-2 text-sm">
                <input type="radio" name={`${idPrefix}-date-order`} value={o} checked={choices.dateOrder === o} onChange={() => onChange({ dateOrder: o })} />
                {DATE_ORDER_LABELS[o]}
                {preview.dateOrder.order === o && <span className="text-xs text-ink-500">(suggested)</span>}
              </label>
            ))}
          </div>
          <p className="mt-1 text-xs text-ink-500">
            {hasDates ? preview.dateOrder.reason : 'No column is mapped to a date.'} {!choices.dateOrder && 'Until you choose, dates that could be read two ways are refused.'}
          </p>
        </fieldset>
        <fieldset>
          <legend className="field-label">Decimal mark</legend>
          <div className="space-y-1">
            {(['.', ','] as const).map((m) => (
              <label key={m} className="flex items-center gap-2 text-sm">
                <input type="radio" name={`${idPrefix}-decimal-mark`} value={m} checked={choices.decimalMark === m} onChange={() => onChange({ decimalMark: m })} />
                {m === '.' ? 'Point (3.5)' : 'Comma (3,5)'}
                {preview.decimalMark.mark === m && <span className="text-xs text-ink-500">(suggested)</span>}
              </label>
            ))}
          </div>
          <p className="mt-1 text-xs text-ink-500">{preview.decimalMark.reason}</p>
        </fieldset>
      </div>

      {coded.map(({ i, column }) => (
        <CodeMapping
          key={`${i}-${column.key}`}
          header={preview.columns[i]!.header}
          column={column}
          values={preview.columns[i]!.values}
          more={preview.columns[i]!.moreValues}
          chosen={choices.codes[column.key] ?? {}}
          onChange={(map) => onChange({ codes: { ...choices.codes, [column.key]: map } })}
        />
      ))}
    </div>
  );
}

function CodeMapping({
  header,
  column,
  values,
  more,
  chosen,
  onChange,
}: {
  header: string;
  column: TemplateColumn;
  values: { value: string; count: number }[];
  more: boolean;
  chosen: Record<string, string>;
  onChange: (map: Record<string, string>) => void;
}) {
  const proposals = suggestCodes(
    values.map((v) => v.value),
    column,
  );
  const toAsk = proposals.filter((p) => p.match !== 'exact' || chosen[p.value]);
  const exact = proposals.filter((p) => p.match === 'exact' && !chosen[p.value]);
  if (toAsk.length === 0) return null;
  return (
    <fieldset className="space-y-2">
      <legend className="font-medium">
        Values of “{header}” → {column.label}
      </legend>
      {exact.length > 0 && <p className="text-xs text-ink-500">Read as they are: {exact.map((p) => p.value).join(', ')}.</p>}
      <div className="grid gap-2 sm:grid-cols-2">
        {toAsk.map((p) => (
          <label key={p.value} className="flex flex-wrap items-center gap-2 text-sm">
            <span className="min-w-24 font-medium">“{p.value}”</span>
            <select
              aria-label={`Code for “${p.value}” in ${header}`}
              className="field-input w-auto"
              value={chosen[p.value] ?? ''}
              onChange={(e) => {
                const next = { ...chosen };
                if (e.target.value) next[p.value] = e.target.value;
                else delete next[p.value];
                onChange(next);
              }}
            >
              <option value="">Not mapped</option>
              {(column.codes ?? []).map((c) => (
                <option key={c.code} value={c.code}>
                  {c.label}
                </option>
              ))}
            </select>
            {p.match === 'near' && p.code === chosen[p.value] && <span className="text-xs text-ink-500">(suggested)</span>}
          </label>
        ))}
      </div>
      {more && <p className="text-xs text-ink-500">The 60 most frequent values are listed; check the file for the others.</p>}
    </fieldset>
  );
}

'use client';
import { useState } from 'react';
import Link from 'next/link';
import type { ImportProgress, ImportResult } from '@/lib/services/import';
import type { ImportPreview } from '@/lib/services/import-file';
import { DATE_ORDERS, DATE_ORDER_LABELS, type DateOrder } from '@/lib/import/dates';
import { suggestCodes } from '@/lib/import/mapping';
import type { TemplateColumn } from '@/lib/import/template';
import { Notice } from '@/components/ui/Notice';

type Mode = 'dry-run' | 'commit' | 'commit-valid';
type Phase = { kind: 'idle' } | { kind: 'running'; mode: Mode; progress?: ImportProgress } | { kind: 'done'; result: ImportResult } | { kind: 'failed'; message: string };

interface Choices {
  sheet: string | null;
  columns: (string | null)[];
  dateOrder: DateOrder | null;
  decimalMark: '.' | ',';
  codes: Record<string, Record<string, string>>;
}

async function failure(res: Response, fallback: string): Promise<Error> {
  const body = (await res.json().catch(() => ({}))) as { message?: string; fieldErrors?: Record<string, string[]> };
  return new Error(Object.values(body.fieldErrors ?? {})[0]?.[0] ?? body.message ?? fallback);
}

/** POST /api/cases/import/read: the columns, samples and proposals of the file. */
async function readFile(file: File, sheet: string | null): Promise<ImportPreview> {
  const form = new FormData();
  form.set('file', file);
  if (sheet) form.set('sheet', sheet);
  const res = await fetch('/api/cases/import/read', { method: 'POST', body: form, headers: { Accept: 'application/json' } });
  if (!res.ok) throw await failure(res, 'The file could not be read.');
  return (await res.json()) as ImportPreview;
}

/** Reads the NDJSON progress stream of POST /api/cases/import until its result line. */
async function runImport(file: File, choices: Choices, mode: Mode, onProgress: (p: ImportProgress) => void): Promise<ImportResult> {
  const form = new FormData();
  form.set('file', file);
  form.set('options', JSON.stringify(choices));
  const query = mode === 'commit-valid' ? 'mode=commit&validRowsOnly=1' : `mode=${mode}`;
  const res = await fetch(`/api/cases/import?${query}&stream=1`, { method: 'POST', body: form, headers: { Accept: 'application/x-ndjson' } });
  if (!res.ok || !res.body) throw await failure(res, 'The file could not be sent.');
  const reader = res.body.pipeThrough(new TextDecoderStream()).getReader();
  let buffer = '';
  for (;;) {
    const { value, done } = await reader.read();
    if (value) buffer += value;
    let nl: number;
    while ((nl = buffer.indexOf('\n')) >= 0) {
      const line = JSON.parse(buffer.slice(0, nl)) as { type: string } & Record<string, unknown>;
      buffer = buffer.slice(nl + 1);
      if (line.type === 'progress') onProgress(line as unknown as ImportProgress);
      else if (line.type === 'result') return line as unknown as ImportResult;
      else if (line.type === 'error') throw new Error(String(line.message ?? 'The import failed. Nothing was imported.'));
    }
    if (done) throw new Error('The connection ended before the import finished. Nothing was imported.');
  }
}

/** The proposed choices, with a code proposed for each value of a coded column that is not a code already. */
function initialChoices(preview: ImportPreview): Choices {
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

function downloadCsv(text: string, name: string) {
  const url = URL.createObjectURL(new Blob([text], { type: 'text/csv;charset=utf-8' }));
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  a.click();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

export function ImportPanel() {
  const [file, setFile] = useState<File | null>(null);
  const [preview, setPreview] = useState<ImportPreview | null>(null);
  const [choices, setChoices] = useState<Choices | null>(null);
  const [reading, setReading] = useState(false);
  const [phase, setPhase] = useState<Phase>({ kind: 'idle' });

  const load = async (f: File, sheet: string | null) => {
    setReading(true);
    setPhase({ kind: 'idle' });
    try {
      const p = await readFile(f, sheet);
      setPreview(p);
      setChoices(initialChoices(p));
    } catch (e) {
      setPreview(null);
      setChoices(null);
      setPhase({ kind: 'failed', message: (e as Error).message });
    } finally {
      setReading(false);
    }
  };

  const start = async (mode: Mode) => {
    if (!file || !choices) return;
    setPhase({ kind: 'running', mode });
    try {
      const result = await runImport(file, choices, mode, (progress) => setPhase({ kind: 'running', mode, progress }));
      setPhase({ kind: 'done', result });
    } catch (e) {
      setPhase({ kind: 'failed', message: (e as Error).message });
    }
  };

  const change = (next: Partial<Choices>) => {
    setChoices((c) => (c ? { ...c, ...next } : c));
    setPhase({ kind: 'idle' });
  };

  const result = phase.kind === 'done' ? phase.result : null;
  const clean = result && result.errors.length === 0;
  const badRows = result ? new Set(result.errors.map((e) => e.line)).size : 0;
  return (
    <section aria-label="Import a file" className="card space-y-5">
      <ol className="list-decimal space-y-1 pl-5 text-sm text-ink-700">
        <li>
          Use your own spreadsheet (CSV or Excel .xlsx) or{' '}
          <a href="/api/cases/import" download>
            download the template
          </a>
          : one row per completed case.
        </li>
        <li>Tell Lamina which of your columns is which, how your dates are written and which codes your values mean. Lamina remembers it for your next file.</li>
        <li>Check the file: every bad row is listed with its line and column. When nothing is wrong, import it: all rows go in together, or none.</li>
      </ol>
      <div>
        <label htmlFor="import-file" className="field-label">
          Spreadsheet (CSV or .xlsx)
        </label>
        <input
          id="import-file"
          type="file"
          accept=".csv,.xlsx,.txt,text/csv,application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
          className="block max-w-full text-sm"
          onChange={(e) => {
            const f = e.target.files?.[0] ?? null;
            setFile(f);
            setPreview(null);
            setChoices(null);
            if (f) void load(f, null);
          }}
        />
        {reading && (
          <p role="status" className="mt-2 text-sm text-ink-500">
            Reading the file…
          </p>
        )}
      </div>

      {file && preview && choices && (
        <Mapping
          preview={preview}
          choices={choices}
          onChange={change}
          onSheet={(sheet) => {
            void load(file, sheet);
          }}
        />
      )}

      {preview && choices && (
        <div className="flex flex-wrap items-end gap-3">
          <button type="button" className="btn-secondary" disabled={!file || phase.kind === 'running' || reading} onClick={() => start('dry-run')}>
            Check the file
          </button>
          <button
            type="button"
            className="btn-primary"
            disabled={!file || phase.kind === 'running' || reading || !clean || result?.mode === 'commit'}
            onClick={() => start('commit')}
          >
            {clean && result?.mode === 'dry-run' ? `Import ${result.summary.validRows} case${result.summary.validRows === 1 ? '' : 's'}` : 'Import'}
          </button>
          {result && !clean && result.mode === 'dry-run' && result.summary.validRows > 0 && (
            <button type="button" className="btn-secondary" disabled={phase.kind === 'running' || reading} onClick={() => start('commit-valid')}>
              Import the {result.summary.validRows} valid row{result.summary.validRows === 1 ? '' : 's'} only
            </button>
          )}
        </div>
      )}

      {phase.kind === 'running' && (
        <div role="status" aria-live="polite" className="space-y-1">
          <div className="text-sm">
            {phase.mode === 'dry-run' ? 'Checking' : phase.progress?.phase === 'insert' ? 'Writing' : 'Checking'}
            {phase.progress ? ` ${phase.progress.done.toLocaleString('en-GB')} of ${phase.progress.total.toLocaleString('en-GB')} rows…` : '…'}
          </div>
          <progress className="h-2 w-full accent-dura-700" max={phase.progress?.total ?? 1} value={phase.progress?.done ?? 0} />
        </div>
      )}
      {phase.kind === 'failed' && <Notice tone="alert">{phase.message}</Notice>}

      {result && result.mode === 'commit' && result.committed && (
        <Notice tone="ok">
          Imported {result.summary.cases} cases{result.errors.length ? ` (the ${badRows} rejected row${badRows === 1 ? '' : 's'} left out)` : ''} ({result.summary.newPatients} new patients, {result.summary.visits} recall visits, of which{' '}
          {result.summary.visitsMissed} already past due and marked missed). <Link href="/cases">See the cases</Link>.
        </Notice>
      )}
      {result && result.errors.length > 0 && (
        <div className="space-y-3">
          <Notice tone="alert">
            {result.errors.length} problem{result.errors.length === 1 ? '' : 's'} in {badRows} row
            {badRows === 1 ? '' : 's'}
            {result.committed ? ': those rows were left out.' : ': nothing was imported. Fix the file (or the choices above) and check it again, or import the valid rows only.'}
          </Notice>
          {result.rejectedCsv && (
            <button type="button" className="btn-secondary" onClick={() => downloadCsv(result.rejectedCsv!, 'lamina-cases-rejected.csv')}>
              Download the rejected rows (CSV with reasons)
            </button>
          )}
          <div className="max-h-96 overflow-auto rounded-md border border-bone-200">
            <table className="table-dense table-stack w-full" aria-label="Problems in the file">
              <thead>
                <tr>
                  <th scope="col">Line</th>
                  <th scope="col">Column</th>
                  <th scope="col">Value</th>
                  <th scope="col">Problem</th>
                </tr>
              </thead>
              <tbody>
                {result.errors.slice(0, 500).map((e, i) => (
                  <tr key={`${e.line}-${e.column ?? ''}-${i}`}>
                    <td data-label="Line">{e.line}</td>
                    <td data-label="Column">{e.column ? <code className="text-xs">{e.column}</code> : '—'}</td>
                    <td data-label="Value">{e.value ?? '—'}</td>
                    <td data-label="Problem">{e.reason}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          {result.errors.length > 500 && <p className="text-sm text-ink-500">The first 500 problems are shown.</p>}
        </div>
      )}
      {clean && result?.mode === 'dry-run' && (
        <Notice tone="ok">
          The file is clean: {result.summary.validRows} cases, {result.summary.newPatients} new and {result.summary.knownPatients} known patients,{' '}
          {result.summary.visits} recall visits ({result.summary.visitsMissed} already past due). Nothing is written until you import.
        </Notice>
      )}
    </section>
  );
}

function Mapping({
  preview,
  choices,
  onChange,
  onSheet,
}: {
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
          <label htmlFor="import-sheet" className="field-label">
            Sheet
          </label>
          <select id="import-sheet" className="field-input max-w-xs" value={choices.sheet ?? ''} onChange={(e) => onSheet(e.target.value)}>
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
                <input type="radio" name="date-order" value={o} checked={choices.dateOrder === o} onChange={() => onChange({ dateOrder: o })} />
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
                <input type="radio" name="decimal-mark" value={m} checked={choices.decimalMark === m} onChange={() => onChange({ decimalMark: m })} />
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

'use client';
import Link from 'next/link';
import type { ImportResult } from '@/lib/services/import';
import { Notice } from '@/components/ui/Notice';
import { Mapping } from './MappingStep';
import { downloadCsv, useImport, type ImportMode } from './useImport';

const importUrl = (mode: ImportMode) => `/api/cases/import?${mode === 'commit-valid' ? 'mode=commit&validRowsOnly=1' : `mode=${mode}`}&stream=1`;

export function ImportPanel() {
  const { fileInput, file, preview, choices, reading, phase, load, pick, change, start } = useImport<ImportResult>('/api/cases/import/read', importUrl);

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
          ref={fileInput}
          id="import-file"
          type="file"
          accept=".csv,.xlsx,.txt,text/csv,application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
          className="block max-w-full text-sm"
          onChange={(e) => pick(e.target.files?.[0] ?? null)}
        />
        {reading && (
          <p role="status" className="mt-2 text-sm text-ink-500">
            Reading the file…
          </p>
        )}
      </div>

      {file && preview && choices && (
        <Mapping
          idPrefix="import"
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

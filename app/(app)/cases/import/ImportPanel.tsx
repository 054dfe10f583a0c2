'use client';
import { useState } from 'react';
import Link from 'next/link';
import type { ImportProgress, ImportResult } from '@/lib/services/import';
import { Notice } from '@/components/ui/Notice';

type Mode = 'dry-run' | 'commit' | 'commit-valid';
type Phase = { kind: 'idle' } | { kind: 'running'; mode: Mode; progress?: ImportProgress } | { kind: 'done'; result: ImportResult } | { kind: 'failed'; message: string };

/** Reads the NDJSON progress stream of POST /api/cases/import until its result line. */
async function runImport(file: File, mode: Mode, onProgress: (p: ImportProgress) => void): Promise<ImportResult> {
  const form = new FormData();
  form.set('file', file);
  const query = mode === 'commit-valid' ? 'mode=commit&validRowsOnly=1' : `mode=${mode}`;
  const res = await fetch(`/api/cases/import?${query}&stream=1`, { method: 'POST', body: form, headers: { Accept: 'application/x-ndjson' } });
  if (!res.ok || !res.body) {
    const body = (await res.json().catch(() => ({}))) as { message?: string; fieldErrors?: Record<string, string[]> };
    throw new Error(Object.values(body.fieldErrors ?? {})[0]?.[0] ?? body.message ?? 'The file could not be sent.');
  }
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
  const [phase, setPhase] = useState<Phase>({ kind: 'idle' });

  const start = async (mode: Mode) => {
    if (!file) return;
    setPhase({ kind: 'running', mode });
    try {
      const result = await runImport(file, mode, (progress) => setPhase({ kind: 'running', mode, progress }));
      setPhase({ kind: 'done', result });
    } catch (e) {
      setPhase({ kind: 'failed', message: (e as Error).message });
    }
  };

  const result = phase.kind === 'done' ? phase.result : null;
  const clean = result && result.errors.length === 0;
  const badRows = result ? new Set(result.errors.map((e) => e.line)).size : 0;
  return (
    <section aria-label="Import a file" className="card space-y-4">
      <ol className="list-decimal space-y-1 pl-5 text-sm text-ink-700">
        <li>
          <a href="/api/cases/import" download>
            Download the template
          </a>{' '}
          and fill one row per completed case.
        </li>
        <li>Choose the file and check it. Every bad row is listed with its line and the reason.</li>
        <li>When the check finds no problem, import it: all rows go in together, or none.</li>
      </ol>
      <div className="flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="import-file" className="field-label">
            CSV file
          </label>
          <input
            id="import-file"
            type="file"
            accept=".csv,text/csv"
            className="block text-sm"
            onChange={(e) => {
              setFile(e.target.files?.[0] ?? null);
              setPhase({ kind: 'idle' });
            }}
          />
        </div>
        <button type="button" className="btn-secondary" disabled={!file || phase.kind === 'running'} onClick={() => start('dry-run')}>
          Check the file
        </button>
        <button
          type="button"
          className="btn-primary"
          disabled={!file || phase.kind === 'running' || !clean || result?.mode === 'commit'}
          onClick={() => start('commit')}
        >
          {clean && result?.mode === 'dry-run' ? `Import ${result.summary.validRows} case${result.summary.validRows === 1 ? '' : 's'}` : 'Import'}
        </button>
        {result && !clean && result.mode === 'dry-run' && result.summary.validRows > 0 && (
          <button type="button" className="btn-secondary" disabled={phase.kind === 'running'} onClick={() => start('commit-valid')}>
            Import the {result.summary.validRows} valid row{result.summary.validRows === 1 ? '' : 's'} only
          </button>
        )}
      </div>

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
            {result.committed ? ': those rows were left out.' : ': nothing was imported. Fix the file and check it again, or import the valid rows only.'}
          </Notice>
          {result.rejectedCsv && (
            <button type="button" className="btn-secondary" onClick={() => downloadCsv(result.rejectedCsv!, 'lamina-cases-rejected.csv')}>
              Download the rejected rows (CSV with reasons)
            </button>
          )}
          <div className="max-h-96 overflow-auto rounded-md border border-bone-200">
            <table className="table-dense w-full" aria-label="Problems in the file">
              <thead>
                <tr>
                  <th scope="col">Line</th>
                  <th scope="col">Column</th>
                  <th scope="col">Problem</th>
                </tr>
              </thead>
              <tbody>
                {result.errors.slice(0, 500).map((e, i) => (
                  <tr key={`${e.line}-${e.column ?? ''}-${i}`}>
                    <td>{e.line}</td>
                    <td>{e.column ? <code className="text-xs">{e.column}</code> : '—'}</td>
                    <td>{e.reason}</td>
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

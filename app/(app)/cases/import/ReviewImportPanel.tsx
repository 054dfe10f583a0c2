'use client';
import { useState } from 'react';
import Link from 'next/link';
import type { ReviewImportResult } from '@/lib/services/import-reviews';
import { Notice } from '@/components/ui/Notice';
import { fmtDate } from '@/components/ui/format';
import { Mapping } from './MappingStep';
import { downloadCsv, useImport, type ImportMode } from './useImport';

function importUrl(mode: ImportMode, remindOverdue: boolean): string {
  const q = new URLSearchParams({ mode: mode === 'dry-run' ? 'dry-run' : 'commit', stream: '1' });
  if (mode === 'commit-valid') q.set('validRowsOnly', '1');
  if (remindOverdue) q.set('remindOverdue', '1');
  return `/api/reviews/import?${q}`;
}

const plural = (n: number, one: string, many = `${one}s`) => `${n.toLocaleString('en-GB')} ${n === 1 ? one : many}`;

/** The second import of the page: past reviews, attached to the practice's cases (issue 16). */
export function ReviewImportPanel() {
  const [remindOverdue, setRemindOverdue] = useState(false);
  // the file's columns matched to the review template's, as for the case import (MappingStep)
  const { fileInput, file, preview, choices, reading, phase, setPhase, load, pick, change, start } = useImport<ReviewImportResult>('/api/reviews/import/read', (mode) =>
    importUrl(mode, remindOverdue),
  );

  const result = phase.kind === 'done' ? phase.result : null;
  const checked = result?.mode === 'dry-run';
  const clean = result && result.errors.length === 0;
  const s = result?.summary;
  const running = phase.kind === 'running';
  const busy = running || reading;
  return (
    <section aria-labelledby="review-import-title" className="card space-y-4">
      <h2 id="review-import-title" className="text-xl">
        Past reviews and visits
      </h2>
      <ol className="list-decimal space-y-1 pl-5 text-sm text-ink-700">
        <li>
          <a href="/api/reviews/import" download>
            Download the review template
          </a>{' '}
          and fill one row per review: the patient’s registry number and the tooth (or the case reference), the review date, the findings and
          the assessor — or send the practice’s own spreadsheet (.xlsx or CSV): its columns are matched to the template’s. Import the cases
          first.
        </li>
        <li>Check the file: every row is matched to its case, and every problem listed with its line and column.</li>
        <li>
          Import: outcomes are computed by Lamina’s scoring rules (never taken from the file); past recall visits with a review in their
          window are marked attended, the others missed; the plan continues from today.
        </li>
      </ol>
      <div className="flex flex-wrap items-end gap-3">
        <div>
          <label htmlFor="review-import-file" className="field-label">
            Review file (CSV or .xlsx)
          </label>
          <input
            ref={fileInput}
            id="review-import-file"
            type="file"
            accept=".csv,text/csv,.xlsx,application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
            className="block max-w-full text-sm"
            onChange={(e) => {
              setPhase({ kind: 'idle' });
              pick(e.target.files?.[0] ?? null);
            }}
          />
          {reading && (
            <p role="status" className="mt-2 text-sm text-ink-500">
              Reading the file…
            </p>
          )}
        </div>
        <button type="button" className="btn-secondary" disabled={!file || !choices || busy} onClick={() => start('dry-run')}>
          Check the reviews
        </button>
        <button type="button" className="btn-primary" disabled={!file || busy || !clean || !checked || s?.validRows === 0} onClick={() => start('commit')}>
          {clean && checked ? `Import ${plural(s!.validRows, 'review')}` : 'Import reviews'}
        </button>
        {result && !clean && checked && s!.validRows > 0 && (
          <button type="button" className="btn-secondary" disabled={busy} onClick={() => start('commit-valid')}>
            Import the {plural(s!.validRows, 'valid row')} only
          </button>
        )}
      </div>
      {file && preview && choices && <Mapping idPrefix="review-import" preview={preview} choices={choices} onChange={change} onSheet={(sheet) => void load(file, sheet)} />}
      <label className="flex items-start gap-2 text-sm">
        <input type="checkbox" className="mt-0.5 h-4 w-4 accent-dura-700" checked={remindOverdue} onChange={(e) => setRemindOverdue(e.target.checked)} />
        <span>
          Send reminders for visits already due (by default Lamina sends none for a visit whose due date has passed before the import; the desk
          can still invite by hand).
        </span>
      </label>

      {running && (
        <div role="status" aria-live="polite" className="space-y-1">
          <div className="text-sm">
            {phase.progress?.phase === 'insert' ? 'Writing' : 'Checking'}
            {phase.progress ? ` ${phase.progress.done.toLocaleString('en-GB')} of ${phase.progress.total.toLocaleString('en-GB')}…` : '…'}
          </div>
          <progress className="h-2 w-full accent-dura-700" max={phase.progress?.total || 1} value={phase.progress?.done ?? 0} />
        </div>
      )}
      {phase.kind === 'failed' && <Notice tone="alert">{phase.message}</Notice>}

      {result && result.mode === 'commit' && result.committed && (
        <Notice tone="ok">
          Imported {plural(s!.reviews, 'review')} of {plural(s!.cases, 'case')}: {plural(s!.visitsAttended, 'visit')} marked attended,{' '}
          {s!.visitsMissed} missed, {s!.visitsCancelled} cancelled
          {s!.duplicates ? `; ${plural(s!.duplicates, 'duplicate')} already recorded, skipped` : ''}
          {s!.rejectedRows ? `; ${plural(s!.rejectedRows, 'rejected row')} left out` : ''}. <Link href="/outcomes">See the outcomes</Link>.
        </Notice>
      )}
      {result && result.mode === 'commit' && !result.committed && result.errors.length > 0 && (
        <Notice tone="alert">Nothing was imported: the file has problems. Fix them, or import the valid rows only.</Notice>
      )}
      {clean && checked && (
        <Notice tone="ok">
          The file is clean: {plural(s!.validRows, 'review')} of {plural(s!.cases, 'case')}; {plural(s!.visitsAttended, 'visit')} will be marked
          attended, {s!.visitsMissed} missed, {s!.visitsCancelled} cancelled
          {s!.duplicates ? `; ${plural(s!.duplicates, 'row')} already recorded will be skipped` : ''}. Nothing is written until you import.
        </Notice>
      )}
      {result && result.duplicates.length > 0 && (
        <p className="text-sm text-ink-700">
          Already recorded (same case and date), skipped: line{result.duplicates.length === 1 ? '' : 's'}{' '}
          {result.duplicates
            .slice(0, 30)
            .map((d) => d.line)
            .join(', ')}
          {result.duplicates.length > 30 ? '…' : ''}.
        </p>
      )}
      {result && result.errors.length > 0 && (
        <div className="space-y-3">
          <Notice tone="alert">
            {plural(result.errors.length, 'problem')} in {plural(s!.rejectedRows, 'row')}
            {checked ? `; ${plural(s!.validRows, 'row')} ${s!.validRows === 1 ? 'is' : 'are'} valid` : ''}. Fix the file and check it again
            {s!.validRows > 0 ? ', or import the valid rows only and download the rejected ones' : ''}.
          </Notice>
          {result.rejectedCsv && (
            <button type="button" className="btn-secondary" onClick={() => downloadCsv(result.rejectedCsv!, 'lamina-reviews-rejected.csv')}>
              Download the rejected rows (CSV with reasons)
            </button>
          )}
          <div className="max-h-96 overflow-auto rounded-md border border-bone-200">
            <table className="table-dense table-stack w-full" aria-label="Problems in the review file">
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
                    <td data-label="Line">{e.line}</td>
                    <td data-label="Column">{e.column ? <code className="text-xs">{e.column}</code> : '—'}</td>
                    <td data-label="Problem">{e.reason}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          {result.errors.length > 500 && <p className="text-sm text-ink-500">The first 500 problems are shown.</p>}
        </div>
      )}
      {result && result.rows.length > 0 && (
        <details>
          <summary className="cursor-pointer text-sm font-medium">Outcomes computed ({plural(s!.validRows, 'row')})</summary>
          <div className="mt-2 max-h-80 overflow-auto rounded-md border border-bone-200">
            <table className="table-dense table-stack w-full" aria-label="Reviews in the file">
              <thead>
                <tr>
                  <th scope="col">Line</th>
                  <th scope="col">Patient</th>
                  <th scope="col">Tooth</th>
                  <th scope="col">Review</th>
                  <th scope="col">Outcome</th>
                  <th scope="col">Visit</th>
                </tr>
              </thead>
              <tbody>
                {result.rows.slice(0, 200).map((r) => (
                  <tr key={r.line}>
                    <td data-label="Line">{r.line}</td>
                    <td data-label="Patient">{r.patient}</td>
                    <td data-label="Tooth">{r.tooth}</td>
                    <td data-label="Review">{fmtDate(r.reviewDate)}</td>
                    <td data-label="Outcome">{r.outcomeLabel}</td>
                    <td data-label="Visit">{r.visitMilestone === null ? 'Unplanned' : `${r.visitMilestone}-month, attended`}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        </details>
      )}
      {result && <p className="text-xs text-ink-500">{result.caution}</p>}
    </section>
  );
}

import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { CSV_COLUMNS } from '@/lib/registry/csv';
import { CasesSubnav } from '../_components/CasesSubnav';
import { ImportPanel } from './ImportPanel';
import { ReviewImportPanel } from './ReviewImportPanel';
import { REVIEW_TEMPLATE } from '@/lib/registry/review-csv';

export const metadata: Metadata = { title: 'Import past cases' };

export default async function ImportPage() {
  const { actor } = await requireActor('case.import', '/cases/import');
  return (
    <div className="space-y-5">
      <div>
        <h1 className="text-3xl">Import past cases</h1>
        <p className="mt-1 max-w-3xl text-ink-700">
          Bring completed cases from before Lamina in from your own spreadsheet (CSV or Excel .xlsx, your own column names and date format).
          Lamina checks every row first and shows each problem with its line and column;
          nothing is written until the whole file is clean, and then all rows go in together. Imported cases get their recall plans, and
          visits already past due are marked missed. Then bring in the reviews of those cases: their outcomes fill the outcomes area.
        </p>
      </div>
      <CasesSubnav current="import" canImport={can(actor.roles, 'case.import')} />
      <ImportPanel />
      <details className="card">
        <summary className="cursor-pointer font-medium">The columns of the template ({CSV_COLUMNS.length})</summary>
        <table className="table-dense mt-3 w-full" aria-label="Template columns">
          <thead>
            <tr>
              <th scope="col">Column</th>
              <th scope="col">Meaning</th>
            </tr>
          </thead>
          <tbody>
            {CSV_COLUMNS.map((c) => (
              <tr key={c.name}>
                <td>
                  <code className="text-xs">{c.name}</code>
                  {c.required ? <span className="ml-1 text-xs text-state-alert">required</span> : null}
                </td>
                <td className="text-sm">{c.description}</td>
              </tr>
            ))}
          </tbody>
        </table>
      </details>
      <ReviewImportPanel />
      <details className="card">
        <summary className="cursor-pointer font-medium">The columns of the review template ({REVIEW_TEMPLATE.columns.length})</summary>
        <table className="table-dense mt-3 w-full" aria-label="Review template columns">
          <thead>
            <tr>
              <th scope="col">Column</th>
              <th scope="col">Meaning</th>
            </tr>
          </thead>
          <tbody>
            {REVIEW_TEMPLATE.columns.map((c) => (
              <tr key={c.key}>
                <td>
                  <code className="text-xs">{c.key}</code>
                  {c.required ? <span className="ml-1 text-xs text-state-alert">required</span> : null}
                </td>
                <td className="text-sm">{c.description}</td>
              </tr>
            ))}
          </tbody>
        </table>
      </details>
    </div>
  );
}

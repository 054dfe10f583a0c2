import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { CASE_TEMPLATE } from '@/lib/import/case-template';
import type { TemplateDescriptor } from '@/lib/import/template';
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
      <TemplateColumns template={CASE_TEMPLATE} title="The columns of the template" label="Template columns" />
      <ReviewImportPanel />
      <TemplateColumns template={REVIEW_TEMPLATE} title="The columns of the review template" label="Review template columns" />
    </div>
  );
}

/** A template's columns with their meaning, below its panel. */
function TemplateColumns({ template, title, label }: { template: TemplateDescriptor; title: string; label: string }) {
  return (
    <details className="card">
      <summary className="cursor-pointer font-medium">
        {title} ({template.columns.length})
      </summary>
      <table className="table-dense mt-3 w-full" aria-label={label}>
        <thead>
          <tr>
            <th scope="col">Column</th>
            <th scope="col">Meaning</th>
          </tr>
        </thead>
        <tbody>
          {template.columns.map((c) => (
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
  );
}

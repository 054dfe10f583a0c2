import Link from 'next/link';
import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { listCohorts } from '@/lib/services/cohorts';
import { EXPORT_STATUS_WORDS } from '@/lib/registry/cohort-status';
import { fmtDateTime } from '@/components/ui/format';
import { NewCohortForm } from './NewCohortForm';

export const metadata: Metadata = { title: 'Cohorts' };

/** The researcher's cohorts: each a saved, versioned definition with its anonymised exports. */
export default async function CohortsPage() {
  const { em, actor } = await requireActor('cohort.export', '/cohorts');
  const cohorts = await listCohorts(em, actor);
  return (
    <div className="space-y-6">
      <header>
        <h1 className="text-3xl">Cohorts</h1>
        <p className="mt-2 max-w-3xl text-ink-700">
          Choose cases with the outcomes area’s filters, save the definition as a version, and export an anonymised, analysis-ready archive of it. Only
          patients who agreed to research use are included.
        </p>
      </header>
      <NewCohortForm />
      {cohorts.length === 0 ? (
        <div className="card border-dashed text-ink-700" data-testid="cohorts-empty">
          <h2 className="text-xl text-ink-900">No cohorts yet</h2>
          <p className="mt-2 max-w-2xl">Name your first cohort above; you then choose its cases, save it and export it.</p>
        </div>
      ) : (
        <ul className="grid gap-3 md:grid-cols-2" aria-label="Your practice’s cohorts">
          {cohorts.map((c) => (
            <li key={c.id}>
              <Link href={`/cohorts/${c.id}`} className="card block no-underline hover:border-dura-300">
                <span className="font-semibold text-dura-700">{c.name}</span>
                <span className="mt-1 block text-sm text-ink-700">
                  {c.versions === 0 ? 'Not saved yet' : `${c.versions} saved version${c.versions === 1 ? '' : 's'}`}
                  {c.lastExport ? ` · last export: ${EXPORT_STATUS_WORDS[c.lastExport.status].toLowerCase()}, ${fmtDateTime(c.lastExport.at)}` : ''}
                </span>
              </Link>
            </li>
          ))}
        </ul>
      )}
    </div>
  );
}

import Link from 'next/link';
import type { Metadata } from 'next';
import { notFound } from 'next/navigation';
import { requireActor } from '@/lib/auth/session';
import { COHORT_VARIABLES } from '@/lib/cohorts/catalogue';
import { FACTOR_KEYS, FACTORS, type FactorKey } from '@/lib/outcomes/compute';
import { CASE_KIND_LABELS } from '@/lib/registry/case-kinds';
import { COHORT_NO_LEVEL_FILTER, K_DEFAULT } from '@/lib/schemas/cohort';
import { readCohort } from '@/lib/services/cohorts';
import { NotFoundError } from '@/lib/services/errors';
import { CohortWorkspaceLazy } from './CohortWorkspaceLazy';

export const metadata: Metadata = { title: 'Cohort' };

/** Factors offered as level filters in the builder: the closed vocabularies (no clinician, referrer or year). */
const LEVEL_FACTORS = FACTOR_KEYS.filter((k) => k !== 'kind' && !(COHORT_NO_LEVEL_FILTER as readonly string[]).includes(k) && 'levels' in FACTORS[k]);

export default async function CohortPage({ params }: { params: Promise<{ id: string }> }) {
  const { id } = await params;
  const { em, actor } = await requireActor('cohort.export', `/cohorts/${id}`);
  const cohort = await readCohort(em, actor, id).catch((e: unknown) => {
    if (e instanceof NotFoundError) notFound();
    throw e;
  });
  const factors = LEVEL_FACTORS.map((k: FactorKey) => ({
    key: k,
    label: FACTORS[k].label,
    levels: Object.entries((FACTORS[k] as { levels: Record<string, string> }).levels).map(([code, label]) => ({ code, label })),
  }));
  const variables = COHORT_VARIABLES.map((v) => ({ key: v.key, label: v.label, always: v.always }));
  return (
    <div className="space-y-6">
      <header>
        <p className="text-sm text-ink-500">
          <Link href="/cohorts">Cohorts</Link> ›
        </p>
        <h1 className="text-3xl">{cohort.name}</h1>
        <p className="mt-2 max-w-3xl text-ink-700">
          Choose the cases, save the definition as a version, then export that version. Every export is anonymised (HIPAA Safe Harbor, k-anonymity) and
          only of patients who agreed to research use.
        </p>
      </header>
      <CohortWorkspaceLazy cohort={cohort} factors={factors} variables={variables} kinds={Object.entries(CASE_KIND_LABELS).map(([code, label]) => ({ code, label }))} kDefault={K_DEFAULT} />
    </div>
  );
}

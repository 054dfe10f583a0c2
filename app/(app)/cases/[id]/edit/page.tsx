import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { requireActor } from '@/lib/auth/session';
import { getCase, listClinicians, listPatientCases } from '@/lib/services/cases';
import { listReferrers } from '@/lib/services/referrers';
import { NotFoundError } from '@/lib/services/errors';
import { CaseForm } from '../../_components/CaseFormLazy';
import type { CaseFormShape } from '../../_components/CaseForm';
import { clinicianOptions, referrerOptions, toothCaseOptions } from '../../_components/options';

export const metadata: Metadata = { title: 'Edit case' };

export default async function EditCasePage({ params }: { params: Promise<{ id: string }> }) {
  const { id } = await params;
  const { em, actor } = await requireActor('case.write', `/cases/${id}/edit`);
  const c = await getCase(em, actor, id).catch((e) => {
    if (e instanceof NotFoundError) notFound();
    throw e;
  });
  const [clinicians, referrers, patientCases] = await Promise.all([
    listClinicians(em, actor),
    listReferrers(em, actor, { page: 1, pageSize: 200 }),
    listPatientCases(em, actor, c.patient.id),
  ]);
  return (
    <div className="space-y-5">
      <p className="text-sm">
        <Link href={`/cases/${c.id}`}>← Tooth {c.tooth}</Link>
      </p>
      <h1 className="text-3xl">Edit case: tooth {c.tooth}</h1>
      <p className="text-sm text-ink-700">Changing the completion date moves the visits not yet attended; attended visits stay where they are.</p>
      <CaseForm
        caseId={c.id}
        patient={{ id: c.patient.id, label: `${c.patient.name} (${c.patient.registryNumber})` }}
        clinicians={clinicianOptions(clinicians)}
        referrers={referrerOptions(referrers.rows)}
        notation={c.notation}
        toothCases={toothCaseOptions(patientCases, c.id)}
        initial={{ ...(c.values as unknown as Partial<CaseFormShape>), tooth: String(c.values.tooth) }}
      />
    </div>
  );
}

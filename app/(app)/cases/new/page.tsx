import type { Metadata } from 'next';
import Link from 'next/link';
import { redirect } from 'next/navigation';
import { z } from 'zod';
import { requireActor } from '@/lib/auth/session';
import { getPatient } from '@/lib/services/patients';
import { listClinicians, listPatientCases } from '@/lib/services/cases';
import { listReferrers } from '@/lib/services/referrers';
import { practiceSettings } from '@/lib/services/registry-common';
import { CaseForm } from '../_components/CaseFormLazy';
import { clinicianOptions, referrerOptions, toothCaseOptions } from '../_components/options';

export const metadata: Metadata = { title: 'New case' };

/** `tooth` (FDI) starts the form on that tooth: "record a later treatment of this tooth" on a case page. */
const Query = z.object({ patient: z.uuid().optional().catch(undefined), tooth: z.string().regex(/^[1-8][1-8]$/).optional().catch(undefined) });

/** A case is recorded for a patient: without one, choose or add the patient first. */
export default async function NewCasePage({ searchParams }: { searchParams: Promise<Record<string, string>> }) {
  const { patient: patientId, tooth } = Query.parse(await searchParams);
  const { em, actor } = await requireActor('case.write', `/cases/new${patientId ? `?patient=${patientId}` : ''}`);
  if (!patientId) redirect('/patients');
  const [patient, clinicians, referrers, settings, patientCases] = await Promise.all([
    getPatient(em, actor, patientId),
    listClinicians(em, actor),
    listReferrers(em, actor, { page: 1, pageSize: 200 }),
    practiceSettings(em, actor.practiceId),
    listPatientCases(em, actor, patientId),
  ]);
  return (
    <div className="space-y-5">
      <p className="text-sm">
        <Link href={`/patients/${patient.id}`}>← {patient.name}</Link>
      </p>
      <h1 className="text-3xl">New case</h1>
      <CaseForm
        patient={{ id: patient.id, label: `${patient.name} (${patient.registryNumber}), born ${patient.dateOfBirth}` }}
        clinicians={clinicianOptions(clinicians)}
        referrers={referrerOptions(referrers.rows)}
        notation={settings.toothNotation}
        defaultOperatorId={clinicians.some((c) => c.id === actor.userId) ? actor.userId : undefined}
        toothCases={toothCaseOptions(patientCases)}
        initial={tooth ? { tooth } : undefined}
      />
    </div>
  );
}

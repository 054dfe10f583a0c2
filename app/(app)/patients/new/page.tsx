import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { PatientForm } from '../_components/PatientFormLazy';

export const metadata: Metadata = { title: 'New patient' };

export default async function NewPatientPage() {
  const { actor } = await requireActor('patient.write', '/patients/new');
  return (
    <div className="space-y-5">
      <p className="text-sm">
        <Link href="/patients">← Patients</Link>
      </p>
      <h1 className="text-3xl">New patient</h1>
      <PatientForm then={can(actor.roles, 'case.write') ? 'case' : 'patient'} />
    </div>
  );
}

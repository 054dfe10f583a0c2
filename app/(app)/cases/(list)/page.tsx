import type { Metadata } from 'next';
import Link from 'next/link';
import { Suspense } from 'react';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { listClinicians } from '@/lib/services/cases';
import { TableSkeleton } from '@/components/ui/Skeleton';
import { CasesSubnav } from '../_components/CasesSubnav';
import { CasesTable } from '../_components/CasesTable';
import { clinicianOptions } from '../_components/options';

export const metadata: Metadata = { title: 'Cases' };

export default async function CasesPage() {
  const { em, actor } = await requireActor('patient.read', '/cases');
  const clinicians = await listClinicians(em, actor);
  const canWrite = can(actor.roles, 'case.write');
  const canImport = can(actor.roles, 'case.import');
  return (
    <div className="space-y-5">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl">Cases</h1>
          <p className="mt-1 text-ink-700">Every treated tooth of the practice, with its recall plan and latest outcome.</p>
        </div>
        {canWrite && (
          <Link href="/patients" className="btn-primary no-underline">
            New case
          </Link>
        )}
      </div>
      <CasesSubnav current="cases" canImport={canImport} />
      <Suspense fallback={<TableSkeleton label="Loading cases" />}>
        <CasesTable clinicians={clinicianOptions(clinicians)} canImport={canImport} canWrite={canWrite} />
      </Suspense>
    </div>
  );
}

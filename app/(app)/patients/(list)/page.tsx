import type { Metadata } from 'next';
import Link from 'next/link';
import { z } from 'zod';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { listPatients } from '@/lib/services/patients';
import { SearchText } from '@/lib/services/registry-common';
import { Notice } from '@/components/ui/Notice';
import { Pager } from '@/components/ui/Pager';
import { EmptyState } from '@/components/ui/EmptyState';
import { CasesSubnav } from '../../cases/_components/CasesSubnav';

export const metadata: Metadata = { title: 'Patients' };

const Query = z.object({ q: z.string().optional().catch(undefined), page: z.coerce.number().int().min(1).catch(1).default(1) });

export default async function PatientsPage({ searchParams }: { searchParams: Promise<Record<string, string>> }) {
  const { em, actor } = await requireActor('patient.read', '/patients');
  const raw = Query.parse(await searchParams);
  // The list's own search rule (control characters, length): a bad search is said, not run.
  const search = SearchText.safeParse(raw.q);
  const q = { q: search.success ? search.data : undefined, page: raw.page };
  const data = await listPatients(em, actor, { q: q.q, page: q.page, pageSize: 25 });
  const write = can(actor.roles, 'patient.write');
  const canImport = can(actor.roles, 'case.import');
  return (
    <div className="space-y-5">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl">Patients</h1>
          <p className="mt-1 text-ink-700">Find a patient to see their treated teeth, or to record a new case.</p>
        </div>
        {write && (
          <Link href="/patients/new" className="btn-primary no-underline">
            New patient
          </Link>
        )}
      </div>
      <CasesSubnav current="patients" canImport={canImport} />
      <form role="search" aria-label="Find a patient" className="flex max-w-xl gap-2" action="/patients">
        <label htmlFor="patient-search" className="sr-only">
          Name or registry number
        </label>
        <input id="patient-search" name="q" defaultValue={q.q ?? ''} className="field-input" placeholder="Name or registry number" />
        <button type="submit" className="btn-secondary">
          Search
        </button>
      </form>
      {!search.success && <Notice tone="alert">The search was not run: {search.error.issues[0]?.message}</Notice>}
      {data.total === 0 ? (
        q.q ? (
          <EmptyState title={`No patient matches “${q.q}”`} action={write ? { href: '/patients/new', label: 'Add this patient' } : undefined}>
            Check the spelling or the registry number, or add the patient.
          </EmptyState>
        ) : (
          <EmptyState title="No patients yet" action={write ? { href: '/patients/new', label: 'Add the first patient' } : canImport ? { href: '/cases/import', label: 'Import past cases' } : undefined}>
            Patients hold the contact details and consents that recalls depend on. Add one, then record their treated tooth.
          </EmptyState>
        )
      ) : (
        <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
          <table className="table-dense w-full" aria-label="Patients">
            <thead>
              <tr>
                <th scope="col">Patient</th>
                <th scope="col">Registry no.</th>
                <th scope="col">Born</th>
                <th scope="col">Cases</th>
                <th scope="col">Recall contact</th>
                <th scope="col">Research use</th>
              </tr>
            </thead>
            <tbody>
              {data.rows.map((p) => (
                <tr key={p.id}>
                  <td>
                    <Link href={`/patients/${p.id}`} className="font-medium">
                      {p.name}
                    </Link>
                    {p.archived && <span className="ml-2 text-xs text-ink-500">(archived)</span>}
                  </td>
                  <td>{p.registryNumber}</td>
                  <td>{p.dateOfBirth}</td>
                  <td>{p.caseCount}</td>
                  <td>{p.recallContact ? `✓ Yes, by ${p.recallChannel}` : '✕ No'}</td>
                  <td>{p.researchUse ? '✓ Yes' : '✕ No'}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
      <Pager page={data.page} pageSize={data.pageSize} total={data.total} basePath="/patients" query={{ q: q.q }} />
    </div>
  );
}

import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { getPatient } from '@/lib/services/patients';
import { listPatientCases } from '@/lib/services/cases';
import { NotFoundError } from '@/lib/services/errors';
import { codeLabel } from '@/lib/schemas/case';
import { OutcomeBadge, VisitStatusBadge } from '@/components/ui/StateBadge';
import { EmptyState } from '@/components/ui/EmptyState';
import { fmtDate } from '@/components/ui/format';

export const metadata: Metadata = { title: 'Patient' };

export default async function PatientPage({ params }: { params: Promise<{ id: string }> }) {
  const { id } = await params;
  const { em, actor } = await requireActor('patient.read', `/patients/${id}`);
  const [patient, cases] = await Promise.all([getPatient(em, actor, id), listPatientCases(em, actor, id)]).catch((e) => {
    if (e instanceof NotFoundError) notFound();
    throw e;
  });
  const write = can(actor.roles, 'case.write') && !patient.archived;
  return (
    <div className="space-y-6">
      <p className="text-sm">
        <Link href="/patients">← Patients</Link>
      </p>
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl">{patient.name}</h1>
          <p className="mt-1 text-ink-700">
            Registry no. {patient.registryNumber} · born {patient.dateOfBirth} · {codeLabel(patient.sex)}
            {patient.archived ? ' · archived' : ''}
          </p>
        </div>
        {write && (
          <Link href={`/cases/new?patient=${patient.id}`} className="btn-primary no-underline">
            New case for this patient
          </Link>
        )}
      </div>
      <section aria-labelledby="contact" className="card grid gap-4 text-sm md:grid-cols-3">
        <h2 id="contact" className="text-xl md:col-span-3">
          Contact and consents
        </h2>
        <div>
          <div className="text-ink-500">E-mail</div>
          <div>{patient.email ?? '—'}</div>
        </div>
        <div>
          <div className="text-ink-500">Phone</div>
          <div>{patient.phone ?? '—'}</div>
        </div>
        <div>
          <div className="text-ink-500">Postal code</div>
          <div>{patient.postalCode ?? '—'}</div>
        </div>
        <div>
          <div className="text-ink-500">Recall contact</div>
          <div>{patient.recallContact ? `✓ Agreed, by ${patient.recallChannel}` : '✕ Not agreed — no reminders are sent'}</div>
        </div>
        <div>
          <div className="text-ink-500">Research use</div>
          <div>{patient.researchUse ? '✓ Agreed (anonymised)' : '✕ Not agreed — left out of cohorts'}</div>
        </div>
        <div>
          <div className="text-ink-500">Recorded</div>
          <div>
            {fmtDate(patient.consentDate)}
            {patient.consentRecordedBy ? ` by ${patient.consentRecordedBy.name}` : ''}
          </div>
        </div>
      </section>
      <section aria-labelledby="cases" className="space-y-3">
        <h2 id="cases" className="text-xl">
          Treated teeth ({cases.length})
        </h2>
        {cases.length === 0 ? (
          <EmptyState title="No case yet" action={write ? { href: `/cases/new?patient=${patient.id}`, label: 'Record a case' } : undefined}>
            Record the treated tooth once the treatment starts; completing it creates the recall plan.
          </EmptyState>
        ) : (
          <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
            <table className="table-dense w-full" aria-label="Cases of this patient">
              <thead>
                <tr>
                  <th scope="col">Tooth</th>
                  <th scope="col">Treatment</th>
                  <th scope="col">Operator</th>
                  <th scope="col">Completed</th>
                  <th scope="col">Next visit</th>
                  <th scope="col">Outcome</th>
                </tr>
              </thead>
              <tbody>
                {cases.map((c) => (
                  <tr key={c.id}>
                    <td>
                      <Link href={`/cases/${c.id}`} className="font-semibold">
                        {c.tooth}
                      </Link>
                      <div className="text-xs text-ink-500">{c.toothName}</div>
                    </td>
                    <td>{c.kindLabel}</td>
                    <td>{c.operator.name ?? '—'}</td>
                    <td>{c.completionDate ? fmtDate(c.completionDate) : 'In progress'}</td>
                    <td>{c.nextVisit ? <><div>{fmtDate(c.nextVisit.date)}</div><VisitStatusBadge status={c.nextVisit.status} /></> : '—'}</td>
                    <td>
                      <OutcomeBadge outcome={c.currentOutcome} />
                    </td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        )}
      </section>
    </div>
  );
}

import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { callList } from '@/lib/services/recall-desk';
import { readDeskAddress } from '@/lib/recall/desk-address';
import { fmtDate, fmtDateTime } from '@/components/ui/format';
import { Notice } from '@/components/ui/Notice';
import { EmptyState } from '@/components/ui/EmptyState';
import { PrintButton } from './PrintButton';

export const metadata: Metadata = { title: 'Call list' };

/**
 * The printable call list: the desk's "To call" queue — patients due for an invitation who agreed
 * to recall contact but cannot be e-mailed — with their phone numbers and room to write what was
 * said. The shell's header is hidden in print (app/(app)/layout.tsx).
 */
export default async function CallListPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { em, actor } = await requireActor('recall.manage', '/desk/calls');
  const sp = await searchParams;
  // The address read as the desk reads it: a clinician that is no id is ignored, and said so.
  const address = readDeskAddress((name) => (name === 'clinician' && typeof sp.clinician === 'string' ? sp.clinician : null));
  const list = await callList(em, actor, { clinician: address.clinician || undefined });
  const clinician = list.rows.find((r) => r.clinician)?.clinician;
  return (
    <div className="space-y-4 print:space-y-2 print:text-[11pt]">
      <p className="text-sm print:hidden">
        <Link href={`/desk?queue=call${list.clinician ? `&clinician=${list.clinician}` : ''}`}>← Recall desk</Link>
      </p>
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl print:text-2xl">Call list</h1>
          <p className="mt-1 text-ink-700">
            {list.practiceName} · {fmtDate(list.today)} · {list.rows.length} {list.rows.length === 1 ? 'patient' : 'patients'} to phone
            {list.clinician && clinician ? ` · ${clinician}’s cases` : ''}
          </p>
          <p className="mt-1 text-sm text-ink-700">
            Due for an invitation, agreed to recall contact, but no reminder e-mail can reach them. Note each call in the visit’s contact log on the desk.
          </p>
        </div>
        <PrintButton />
      </div>
      {address.ignored.length > 0 && (
        // about the address typed, not the list: left off the paper
        <div className="space-y-2 print:hidden">
          {address.ignored.map((line) => (
            <Notice key={line} tone="info">
              {line}
            </Notice>
          ))}
        </div>
      )}
      {list.truncated && <Notice tone="info">The list shows the first {list.rows.length} visits; choose a clinician on the desk to print the rest.</Notice>}
      {list.rows.length === 0 ? (
        <EmptyState title="Nobody to call">Every patient due for an invitation can be e-mailed, or already has a time.</EmptyState>
      ) : (
        // on a phone the table scrolls in its own box rather than widening the page; on paper it is whole
        <div className="overflow-x-auto print:overflow-visible" tabIndex={0} role="region" aria-label="Patients to call, scrolls sideways on a small screen">
          <table className="table-dense w-full print:text-[10pt]" aria-label="Patients to call">
            <thead>
              <tr>
                <th scope="col">Patient</th>
                <th scope="col">Phone</th>
                <th scope="col">Visit</th>
                <th scope="col">Due</th>
                <th scope="col">Last contact</th>
                <th scope="col" className="w-1/4">
                  Notes
                </th>
              </tr>
            </thead>
            <tbody>
              {list.rows.map((r) => (
                <tr key={r.visitId} className="break-inside-avoid" data-testid={`call-row-${r.patient.registryNumber}-${r.milestone}`}>
                  <td>
                    <div className="font-medium">{r.patient.name}</div>
                    <div className="text-xs text-ink-500">
                      {r.patient.registryNumber} · prefers {r.patient.channel}
                    </div>
                  </td>
                  <td className="whitespace-nowrap font-medium tabular-nums">{r.patient.phone ?? 'No phone on file'}</td>
                  <td>
                    {r.milestone} months · {list.toothLabel.split(' ')[0]} {r.tooth}
                    {r.clinician ? <div className="text-xs text-ink-500">{r.clinician}</div> : null}
                  </td>
                  <td className="whitespace-nowrap">
                    {fmtDate(r.dueDate)}
                    {r.dueDate < list.today ? <div className="text-xs text-ink-500">overdue</div> : null}
                  </td>
                  <td className="text-xs">{r.lastContact ? `${fmtDateTime(r.lastContact.at)} · ${r.lastContact.kind.replace('_', ' ')}` : 'None yet'}</td>
                  <td className="border-b border-dotted border-ink-300" />
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}
    </div>
  );
}

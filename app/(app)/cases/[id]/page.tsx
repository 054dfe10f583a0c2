import type { Metadata } from 'next';
import Link from 'next/link';
import { notFound } from 'next/navigation';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { getCase, type LinkedCase } from '@/lib/services/cases';
import { NotFoundError } from '@/lib/services/errors';
import {
  APICAL_DIAGNOSIS_LABELS,
  COMPLICATION_LABELS,
  FILLING_TECHNIQUE_LABELS,
  PULPAL_DIAGNOSIS_LABELS,
  SEALER_CLASS_LABELS,
  codeLabel,
} from '@/lib/schemas/case';
import { FILL_LENGTH_LABELS } from '@/lib/scoring';
import { OutcomeBadge, VisitStatusBadge } from '@/components/ui/StateBadge';
import { Caution } from '@/components/ui/Caution';
import { fmtDate } from '@/components/ui/format';
import { ReviewForm } from './ReviewForm';
import { VisitActions } from './VisitActions';
import { isoSize } from '../_components/options';

export const metadata: Metadata = { title: 'Case' };

const TIMELINE_ICON = { 'treatment-started': '▸', 'treatment-completed': '■', 'definitive-restoration': '◆', visit: '○', review: '◉' } as const;

export default async function CasePage({ params }: { params: Promise<{ id: string }> }) {
  const { id } = await params;
  const { em, actor } = await requireActor('patient.read', `/cases/${id}`);
  const c = await getCase(em, actor, id).catch((e) => {
    if (e instanceof NotFoundError) notFound();
    throw e;
  });
  const v = c.values;
  const attended = c.visits.filter((x) => x.status === 'attended');
  const canMoveVisits = can(actor.roles, 'recall.manage');
  const canWrite = can(actor.roles, 'case.write');
  return (
    <div className="space-y-6">
      <p className="text-sm">
        <Link href="/cases">← Cases</Link> · <Link href={`/patients/${c.patient.id}`}>{c.patient.name}</Link>
      </p>
      <div className="flex flex-wrap items-start justify-between gap-4">
        <div>
          <h1 className="text-3xl">
            Tooth {c.tooth} · {c.kindLabel}
          </h1>
          <p className="mt-1 text-ink-700">
            {c.toothName} · {c.patient.name} ({c.patient.registryNumber}) · operator {c.operator.name ?? c.operator.email}
            {c.referrer ? ` · referred by ${c.referrer.name}` : ''}
          </p>
        </div>
        <div className="flex flex-col items-end gap-2">
          <div className="flex items-center gap-2 text-sm">
            Current outcome <OutcomeBadge outcome={c.currentOutcome} />
          </div>
          {can(actor.roles, 'case.write') && !c.archived && (
            <Link href={`/cases/${c.id}/edit`} className="btn-secondary no-underline">
              Edit case
            </Link>
          )}
        </div>
      </div>
      {c.archived && <p className="rounded-md bg-bone-200 px-3 py-2 text-sm">This case is archived: it stays in the record but leaves the working lists.</p>}
      {(c.previousCase || c.laterCases.length > 0 || (c.completionDate && canWrite && !c.archived)) && (
        <ul aria-label="Other treatments of this tooth" className="space-y-1 text-sm">
          {c.previousCase && (
            <li>
              Earlier treatment of this tooth: <LinkedCaseLink linked={c.previousCase} />
            </li>
          )}
          {c.laterCases.map((l) => (
            <li key={l.id}>
              Later treatment: <LinkedCaseLink linked={l} />
            </li>
          ))}
          {c.laterCases.length === 0 && c.completionDate && canWrite && !c.archived && !c.patient.archived && (
            <li>
              <Link href={`/cases/new?patient=${c.patient.id}&tooth=${c.toothFdi}`}>Record a later treatment of this tooth</Link>
            </li>
          )}
        </ul>
      )}

      <div className="grid gap-6 lg:grid-cols-3">
        <section aria-labelledby="timeline" className="card lg:col-span-1">
          <h2 id="timeline" className="text-xl">
            Timeline
          </h2>
          <ol className="mt-3 space-y-3 border-l-2 border-bone-300 pl-4">
            {c.timeline.map((t, i) => (
              <li key={`${t.type}-${t.refId ?? i}`} className="relative">
                <span aria-hidden="true" className="absolute -left-[1.45rem] top-0.5 bg-white text-dura-700">
                  {TIMELINE_ICON[t.type]}
                </span>
                <div className="text-xs text-ink-500">{fmtDate(t.date)}</div>
                <div className="text-sm font-medium">{t.title}</div>
                {t.visitStatus && <VisitStatusBadge status={t.visitStatus} />}
                {t.outcome && <OutcomeBadge outcome={t.outcome} />}
              </li>
            ))}
          </ol>
        </section>

        <div className="space-y-6 lg:col-span-2">
          <section aria-labelledby="treatment" className="card">
            <h2 id="treatment" className="text-xl">
              Treatment
            </h2>
            <dl className="mt-3 grid gap-x-6 gap-y-2 text-sm sm:grid-cols-2">
              <Item term="Started">{fmtDate(c.startDate)}</Item>
              <Item term="Completed (canal filling)">{c.completionDate ? fmtDate(c.completionDate) : 'In progress'}</Item>
              <Item term="Pulpal diagnosis">{PULPAL_DIAGNOSIS_LABELS[v.pulpalDiagnosis]}</Item>
              <Item term="Apical diagnosis">{APICAL_DIAGNOSIS_LABELS[v.apicalDiagnosis]}</Item>
              <Item term="PAI before treatment">{v.paiScore ?? '—'}</Item>
              <Item term="Largest lesion before">{v.lesionDiameterMm !== undefined ? `${v.lesionDiameterMm} mm` : '—'}</Item>
              {c.fields.fields.includes('fillingTechnique') && <Item term="Filling technique">{v.fillingTechnique ? FILLING_TECHNIQUE_LABELS[v.fillingTechnique] : '—'}</Item>}
              {c.fields.fields.includes('sealerClass') && <Item term="Sealer">{v.sealerClass ? SEALER_CLASS_LABELS[v.sealerClass] : '—'}</Item>}
              {c.fields.fields.includes('complications') && (
                <Item term="Complications">{v.complications?.length ? v.complications.map((x) => COMPLICATION_LABELS[x]).join(', ') : 'None'}</Item>
              )}
              {c.fields.fields.includes('fillDensity') && <Item term="Fill density">{v.fillDensity ? codeLabel(v.fillDensity) : '—'}</Item>}
              <Item term="Fill length (case)">{c.fillLengthLabel ?? '—'}</Item>
            </dl>
            {c.canals.length > 0 && (
              <table className="table-dense mt-4 w-full" aria-label="Canals">
                <thead>
                  <tr>
                    <th scope="col">Canal</th>
                    <th scope="col">Working length</th>
                    <th scope="col">Apical size</th>
                    <th scope="col">Filling end to apex</th>
                    <th scope="col">Class</th>
                  </tr>
                </thead>
                <tbody>
                  {c.canals.map((k) => (
                    <tr key={k.name}>
                      <td>{k.name}</td>
                      <td>{k.workingLengthMm !== undefined ? `${k.workingLengthMm} mm` : '—'}</td>
                      <td>{k.apicalSize !== undefined ? isoSize(k.apicalSize) : '—'}</td>
                      <td>{k.fillToApexMm !== undefined ? `${k.fillToApexMm} mm` : '—'}</td>
                      <td>{k.fillLengthClass ? FILL_LENGTH_LABELS[k.fillLengthClass] : '—'}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            )}
          </section>

          <section aria-labelledby="visits" className="card">
            <h2 id="visits" className="text-xl">
              Recall plan
            </h2>
            {c.visits.length === 0 ? (
              <p className="mt-2 text-sm text-ink-700">No visits yet: the recall plan is made when the case is completed.</p>
            ) : (
              <table className="table-dense mt-3 w-full" aria-label="Recall visits">
                <thead>
                  <tr>
                    <th scope="col">Milestone</th>
                    <th scope="col">Due</th>
                    <th scope="col">Window</th>
                    <th scope="col">Status</th>
                    <th scope="col">
                      <span className="sr-only">Actions</span>
                    </th>
                  </tr>
                </thead>
                <tbody>
                  {c.visits.map((x) => (
                    <tr key={x.id} data-testid={`visit-${x.milestone}`}>
                      <td>{x.milestone} months</td>
                      <td>{fmtDate(x.dueDate)}</td>
                      <td className="text-xs text-ink-500">
                        {fmtDate(x.windowStart)} – {fmtDate(x.windowEnd)}
                      </td>
                      <td>
                        <VisitStatusBadge status={x.status} />
                        {x.bookedDate && <div className="text-xs text-ink-500">booked {fmtDate(x.bookedDate)}</div>}
                      </td>
                      <td>{canMoveVisits && x.allowedNext.length > 0 && <VisitActions visit={x} />}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            )}
          </section>

          <section aria-labelledby="reviews" className="card space-y-3">
            <h2 id="reviews" className="text-xl">
              Reviews
            </h2>
            {c.reviews.length === 0 ? (
              <p className="text-sm text-ink-700">No follow-up review yet.</p>
            ) : (
              <table className="table-dense w-full" aria-label="Reviews">
                <thead>
                  <tr>
                    <th scope="col">Date</th>
                    <th scope="col">Visit</th>
                    <th scope="col">Tooth</th>
                    <th scope="col">PAI</th>
                    <th scope="col">Lesion</th>
                    <th scope="col">Outcome</th>
                    <th scope="col">Why</th>
                  </tr>
                </thead>
                <tbody>
                  {c.reviews.map((r) => (
                    <tr key={r.id}>
                      <td>{fmtDate(r.reviewDate)}</td>
                      <td>{r.visitMilestone ? `${r.visitMilestone} months` : 'Unplanned'}</td>
                      <td>
                        {r.toothStatusLabel}
                        {(r.eventDate || r.extractionReasonLabel) && (
                          <div className="text-xs text-ink-500">{[r.eventDate ? `on ${fmtDate(r.eventDate)}` : null, r.extractionReasonLabel].filter(Boolean).join(' · ')}</div>
                        )}
                      </td>
                      <td>{r.paiScore ?? '—'}</td>
                      <td>{r.lesionDiameterMm !== null ? `${r.lesionDiameterMm} mm` : '—'}</td>
                      <td>
                        <OutcomeBadge outcome={r.outcome} />
                        <div className="text-xs text-ink-500">
                          strict {r.successStrict ? '✓' : '✕'} · lenient {r.successLenient ? '✓' : '✕'}
                        </div>
                      </td>
                      <td className="text-xs">{r.reasons.join('; ')}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            )}
            <Caution text={c.caution} />
            {can(actor.roles, 'review.write') && c.completionDate && !c.archived && (
              <ReviewForm caseId={c.id} visits={attended.map((x) => ({ value: x.id, label: `${x.milestone} months (${fmtDate(x.dueDate)})` }))} completionDate={c.completionDate} />
            )}
          </section>
        </div>
      </div>
    </div>
  );
}

function Item({ term, children }: { term: string; children: React.ReactNode }) {
  return (
    <div>
      <dt className="text-ink-500">{term}</dt>
      <dd className="font-medium">{children}</dd>
    </div>
  );
}

function LinkedCaseLink({ linked }: { linked: LinkedCase }) {
  return (
    <>
      <Link href={`/cases/${linked.id}`}>{linked.kindLabel}</Link>, {linked.completionDate ? `completed ${fmtDate(linked.completionDate)}` : `started ${fmtDate(linked.startDate)}, in progress`}
      {linked.archived ? ' (archived)' : ''}
    </>
  );
}

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
import { REVIEW_SIGNS } from '@/lib/schemas/review';
import type { ReviewView } from '@/lib/services/reviews';
import { OutcomeBadge, VisitStatusBadge } from '@/components/ui/StateBadge';
import { Caution } from '@/components/ui/Caution';
import { fmtDate } from '@/components/ui/format';
import { ReviewForm } from '../ReviewFormLazy';
import type { ReviewCorrection, ReviewFilm, ReviewVisitOption } from '../ReviewForm';
import { VisitActions } from '../VisitActions';
import { ReferrerAction } from '../ReferrerActions';
import { FilmsSection } from '../FilmsSection';
import { listFilms } from '@/lib/services/films';
import { isoSize } from '../../_components/options';

export const metadata: Metadata = { title: 'Case' };

const TIMELINE_ICON = { 'treatment-started': '▸', 'treatment-completed': '■', 'definitive-restoration': '◆', visit: '○', review: '◉' } as const;

export default async function CasePage({ params, searchParams }: { params: Promise<{ id: string }>; searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { id } = await params;
  const query = await searchParams;
  const { em, actor } = await requireActor('patient.read', `/cases/${id}`);
  const c = await getCase(em, actor, id).catch((e) => {
    if (e instanceof NotFoundError) notFound();
    throw e;
  });
  const v = c.values;
  const canMoveVisits = can(actor.roles, 'recall.manage');
  const canReview = can(actor.roles, 'review.write') && Boolean(c.completionDate) && !c.archived;
  // A review can be recorded at an attended visit, or at one that has begun and may become attended:
  // saving the review marks it attended in the same step (the clinician sees the patient in the chair).
  const reviewVisits: ReviewVisitOption[] = c.visits
    .filter((x) => x.status === 'attended' || x.allowedNext.includes('attended'))
    .map((x) => ({
      value: x.id,
      label: `${x.milestone} months — ${x.ofTheDay ? 'confirmed for today' : x.statusLabel.toLowerCase()}${x.bookedDate && !x.ofTheDay ? `, booked ${fmtDate(x.bookedDate)}` : ''}`,
      marksAttended: x.status !== 'attended',
    }));
  const wanted = typeof query.review === 'string' ? query.review : undefined;
  const initialVisitId = reviewVisits.find((x) => x.value === wanted)?.value ?? c.visits.find((x) => x.ofTheDay)?.id;
  const correctingId = typeof query.correct === 'string' ? query.correct : undefined;
  const correcting = canReview ? c.reviews.find((r) => r.id === correctingId && r.current) : undefined;
  const canWrite = can(actor.roles, 'case.write');
  const films = can(actor.roles, 'film.read') ? await listFilms(em, actor, c.id) : null;
  const canWriteReferrer = can(actor.roles, 'referrer.send') && Boolean(c.referrer) && !c.archived;
  // A diameter measured in the film viewer comes back in the link to the review form (0.1 mm steps).
  const lesionMm = typeof query.lesionMm === 'string' && /^\d{1,2}(\.\d)?$/.test(query.lesionMm) ? Number(query.lesionMm) : undefined;
  const reviewFilms: ReviewFilm[] = (films?.films ?? []).map((f) => ({
    id: f.id,
    visitId: f.visitId,
    label: `${f.roleLabel.toLowerCase()} film of ${fmtDate(f.acquisitionDate ?? f.createdAt)}`,
    diameterMm: f.measurement?.diameterMm ?? null,
    modality: f.modality,
  }));
  const baselineFilmId = (films?.films.find((f) => f.role === 'post_fill') ?? films?.films.find((f) => f.role === 'pre_operative'))?.id;
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
                <div className={`text-sm font-medium ${t.superseded ? 'text-ink-500 line-through' : ''}`}>{t.title}</div>
                {t.visitStatus && <VisitStatusBadge status={t.visitStatus} />}
                {t.outcome && !t.superseded && <OutcomeBadge outcome={t.outcome} />}
                {t.detail && <div className="text-xs text-ink-700">{t.detail}</div>}
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
              <table className="table-dense table-stack mt-4 w-full" aria-label="Canals">
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
                      <td data-label="Canal">{k.name}</td>
                      <td data-label="Working length">{k.workingLengthMm !== undefined ? `${k.workingLengthMm} mm` : '—'}</td>
                      <td data-label="Apical size">{k.apicalSize !== undefined ? isoSize(k.apicalSize) : '—'}</td>
                      <td data-label="Filling end to apex">{k.fillToApexMm !== undefined ? `${k.fillToApexMm} mm` : '—'}</td>
                      <td data-label="Class">{k.fillLengthClass ? FILL_LENGTH_LABELS[k.fillLengthClass] : '—'}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            )}
          </section>

          {films && (
            <FilmsSection
              caseId={c.id}
              initialFilms={films.films}
              maxBytes={films.maxBytes}
              canUpload={can(actor.roles, 'film.upload') && !c.archived}
              visits={c.visits.map((x) => ({ value: x.id, label: `${x.milestone} months — ${x.statusLabel.toLowerCase()}` }))}
            />
          )}

          <section aria-labelledby="visits" className="card">
            <h2 id="visits" className="text-xl">
              Recall plan
            </h2>
            {c.visits.length === 0 ? (
              <p className="mt-2 text-sm text-ink-700">No visits yet: the recall plan is made when the case is completed.</p>
            ) : (
              <table className="table-dense table-stack mt-3 w-full" aria-label="Recall visits">
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
                      <td data-label="Milestone">{x.milestone} months</td>
                      <td data-label="Due">{fmtDate(x.dueDate)}</td>
                      <td data-label="Window" className="text-xs text-ink-500">
                        {fmtDate(x.windowStart)} – {fmtDate(x.windowEnd)}
                      </td>
                      <td data-label="Status">
                        <VisitStatusBadge status={x.status} />
                        {x.ofTheDay && <div className="text-xs font-medium text-dura-700">Visit of the day</div>}
                        {x.bookedDate && <div className="text-xs text-ink-500">booked {fmtDate(x.bookedDate)}</div>}
                        {x.missedReasonLabel && <div className="text-xs text-ink-500">{x.missedReasonLabel}</div>}
                      </td>
                      <td data-label="Action">
                        {canMoveVisits && (x.allowedNext.length > 0 || x.canUndoMissed) && <VisitActions visit={x} />}
                        {canWriteReferrer && x.allowedNext.length > 0 && (
                          <ReferrerAction
                            url={`/api/cases/${c.id}/referrer-links`}
                            body={{ visitId: x.id }}
                            label="Ask the referrer for the film"
                            doneLabel="Upload link sent"
                            referrer={c.referrer ?? undefined}
                          />
                        )}
                        {canReview && x.allowedNext.includes('attended') && (
                          <Link href={`/cases/${c.id}?review=${x.id}#record-review`} className="btn-secondary min-h-0 py-1 text-sm no-underline">
                            Record the review
                          </Link>
                        )}
                      </td>
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
              <table className="table-dense table-stack w-full" aria-label="Reviews">
                <thead>
                  <tr>
                    <th scope="col">Date</th>
                    <th scope="col">Visit</th>
                    <th scope="col">Tooth</th>
                    <th scope="col">PAI</th>
                    <th scope="col">Lesion</th>
                    <th scope="col">Findings</th>
                    <th scope="col">Outcome</th>
                    <th scope="col">Why</th>
                  </tr>
                </thead>
                <tbody>
                  {c.reviews.map((r) => (
                    <tr key={r.id} data-testid={`review-${r.id}`} className={r.current ? undefined : 'text-ink-500'}>
                      <td data-label="Date">
                        {fmtDate(r.reviewDate)}
                        {!r.current && <div className="text-xs font-medium">Superseded</div>}
                        {r.supersedes && (
                          <div className="text-xs text-ink-500">
                            Corrected by {r.correctedBy?.name ?? 'a clinician'}: {r.correctionReason}
                          </div>
                        )}
                        {canReview && r.current && (
                          <div>
                            <Link href={`/cases/${c.id}?correct=${r.id}#correct-review`} className="text-xs" aria-label={`Correct the review of ${fmtDate(r.reviewDate)}`}>
                              Correct
                            </Link>
                          </div>
                        )}
                      </td>
                      <td data-label="Visit">{r.visitMilestone ? `${r.visitMilestone} months` : 'Unplanned'}</td>
                      <td data-label="Tooth">
                        {r.toothStatusLabel}
                        {(r.eventDate || r.extractionReasonLabel) && (
                          <div className="text-xs text-ink-500">{[r.eventDate ? `on ${fmtDate(r.eventDate)}` : null, r.extractionReasonLabel].filter(Boolean).join(' · ')}</div>
                        )}
                      </td>
                      <td data-label="PAI">{r.paiScore ?? '—'}</td>
                      <td data-label="Lesion">{r.lesionDiameterMm !== null ? `${r.lesionDiameterMm} mm` : '—'}</td>
                      <td data-label="Findings" className="text-xs">{r.findings}</td>
                      <td data-label="Outcome">
                        <OutcomeBadge outcome={r.outcome} />
                        <div className="text-xs text-ink-500">
                          strict {r.successStrict ? '✓' : '✕'} · lenient {r.successLenient ? '✓' : '✕'}
                        </div>
                      </td>
                      <td data-label="Why" className="text-xs">
                        {r.reasons.join('; ')}
                        {canWriteReferrer && r.current && (
                          <ReferrerAction url={`/api/reviews/${r.id}/letter`} label="Send the outcome letter" doneLabel="Outcome letter sent" referrer={c.referrer ?? undefined} />
                        )}
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            )}
            {c.latestOutcome === 'disease' && (
              <p className="rounded-md border border-bone-300 bg-bone-100 px-3 py-2 text-sm" data-testid="next-step">
                <span aria-hidden="true">⚠ </span>The latest review found disease: <strong>no next step recorded</strong>. Retreatment, surgery or watchful waiting is the
                clinician’s decision with the patient.
              </p>
            )}
            <Caution text={c.caution} />
            {correcting && c.completionDate && (
              <div id="correct-review">
                <ReviewForm key={correcting.id} caseId={c.id} visits={[]} completionDate={c.completionDate} startOpen correcting={correctionOf(correcting)} />
              </div>
            )}
            {canReview && c.completionDate && !correcting && (
              <ReviewForm
                // A new "Record the review" link (another ?review=) opens a fresh form on that visit.
                key={`${wanted ?? ''}/${initialVisitId ?? ''}/${lesionMm ?? ''}`}
                caseId={c.id}
                visits={reviewVisits}
                completionDate={c.completionDate}
                initialVisitId={initialVisitId}
                startOpen={Boolean(wanted)}
                initialLesionMm={lesionMm}
                films={reviewFilms}
                baselineFilmId={baselineFilmId}
              />
            )}
          </section>
        </div>
      </div>
    </div>
  );
}

/** A saved review as the correction form edits it. */
function correctionOf(r: ReviewView): ReviewCorrection {
  const signs = Object.fromEntries(REVIEW_SIGNS.map((k) => [k, r.signs[k] === true]));
  return {
    reviewId: r.id,
    label: fmtDate(r.reviewDate),
    visitLabel: r.visitMilestone ? `${r.visitMilestone} months` : 'unplanned',
    values: {
      reviewDate: r.reviewDate,
      toothStatus: r.toothStatus,
      ...(r.paiScore !== null ? { paiScore: r.paiScore } : {}),
      ...(r.lesionDiameterMm !== null ? { lesionDiameterMm: r.lesionDiameterMm } : {}),
      ...signs,
      otherFindings: r.otherFindings ?? '',
    },
  };
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

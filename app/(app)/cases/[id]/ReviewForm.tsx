'use client';
import { useRef, useState } from 'react';
import { useFocusAfterRender } from '@/components/ui/useFocusAfterRender';
import { useRouter } from 'next/navigation';
import { useForm, useWatch } from 'react-hook-form';
import { schemaResolver } from '@/components/forms/schemaResolver';
import { z } from 'zod';
import {
  EVENT_STATUSES,
  EXTRACTION_REASONS,
  EXTRACTION_REASON_LABELS,
  REVIEW_SIGNS,
  REVIEW_SIGN_LABELS,
  ReviewCreateSchema,
  TOOTH_STATUSES,
  TOOTH_STATUS_LABELS,
  type ToothStatus,
} from '@/lib/schemas/review';
import { ReviewCorrectionReason } from '@/lib/schemas/review-correction';
import { Field } from '@/components/ui/Field';
import { Select, optionsOf } from '@/components/ui/Select';
import { Notice } from '@/components/ui/Notice';
import { Check, CheckGroup } from '@/components/ui/Check';
import { PAI_OPTIONS } from '../_components/options';
import { submitJson } from '@/components/forms/submitJson';
import { PAI_REFERENCE_CAUTION, PaiReferenceDrawing } from '@/components/films/PaiReference';
import { cbctPai } from '@/lib/scoring/cbct-pai';
import type { PaiScore } from '@/lib/scoring/pai';

type Shape = Record<string, unknown> & {
  visitId?: string;
  reviewDate: string;
  toothStatus: string;
  paiScore?: number;
  lesionDiameterMm?: number;
  otherFindings?: string;
  eventDate?: string;
  extractionReason?: string;
  reason?: string;
};

/** A visit the review can be recorded at; `marksAttended`: saving marks it attended (it is not yet). */
export interface ReviewVisitOption {
  value: string;
  label: string;
  marksAttended: boolean;
}

/** A saved review being corrected: its id, how it is named, and its findings as the form edits them. */
export interface ReviewCorrection {
  reviewId: string;
  label: string;
  visitLabel: string;
  values: Partial<Shape>;
}

/** A film of the case as the review form lists it (those of the chosen visit are shown). */
export interface ReviewFilm {
  id: string;
  visitId: string | null;
  label: string;
  /** The largest lesion diameter measured on it in the viewer (mm, 0.1), if any. */
  diameterMm: number | null;
  /** DICOM modality (CT for a cone-beam or other CT volume's slice). */
  modality: string | null;
}

/** The CBCT-PAI (Estrela et al. 2008; lib/scoring/cbct-pai.ts) of the diameter typed, or null. */
function liveCbctPai(mm: unknown): { label: string; description: string } | null {
  const d = typeof mm === 'number' ? mm : typeof mm === 'string' && mm !== '' ? Number(mm) : Number.NaN;
  if (!Number.isFinite(d) || d < 0 || d > 100) return null;
  return cbctPai(d);
}

const num = { setValueAs: (v: unknown) => (v === '' || v === undefined ? undefined : Number(v)) };
// caseId and assessorId come from the page and the session; the form checks the rest with the API's schema.
const FormSchema = z.preprocess((v) => ({ ...(v as object), caseId: 'this-case', assessorId: 'me' }), ReviewCreateSchema);
const CorrectionFormSchema = FormSchema.and(ReviewCorrectionReason);

/**
 * The plain review entry form: findings in, outcome computed by the scoring rules on the server.
 * At a visit not yet attended, saving marks it attended in the same step. With `correcting`, it
 * corrects a saved review instead (same visit, a reason required; the earlier version is kept).
 */
export function ReviewForm({
  caseId,
  visits,
  completionDate,
  initialVisitId,
  startOpen = false,
  correcting,
  initialLesionMm,
  films = [],
  baselineFilmId,
}: {
  caseId: string;
  visits: ReviewVisitOption[];
  completionDate: string;
  initialVisitId?: string;
  startOpen?: boolean;
  correcting?: ReviewCorrection;
  /** A diameter measured in the film viewer, carried here by its "Record the review" link. */
  initialLesionMm?: number;
  /** The case's films: those of the chosen visit are listed with a link to the viewer. */
  films?: ReviewFilm[];
  /** The film the viewer shows beside a follow-up film (the latest baseline). */
  baselineFilmId?: string;
}) {
  const router = useRouter();
  const [open, setOpen] = useState(startOpen);
  const [serverError, setServerError] = useState<string | null>(null);
  const [saved, setSaved] = useState(false);
  // The focus follows the form: to its heading when it opens (by its button, or by a link that opens
  // it), back to its button when it closes (saved or cancelled). Without this, the control that had
  // the focus disappears and a keyboard user starts again from the top of the page.
  const heading = useRef<HTMLHeadingElement>(null);
  const trigger = useRef<HTMLButtonElement>(null);
  const focusAfter = useFocusAfterRender(() => heading.current ?? trigger.current, startOpen);
  const openForm = () => {
    setSaved(false);
    setOpen(true);
    focusAfter();
  };
  const closeForm = () => {
    setOpen(false);
    focusAfter();
  };
  const form = useForm<Shape>({
    resolver: schemaResolver(correcting ? CorrectionFormSchema : FormSchema, { raw: true }),
    defaultValues: correcting
      ? { ...correcting.values, reason: '' }
      : { toothStatus: 'present', reviewDate: new Date().toISOString().slice(0, 10), visitId: initialVisitId ?? '', lesionDiameterMm: initialLesionMm },
  });
  const { register, formState, control } = form;
  const e = formState.errors as Record<string, { message?: string } | undefined>;
  const status = useWatch({ control, name: 'toothStatus' });
  const visitId = useWatch({ control, name: 'visitId' });
  const marks = !correcting && visits.find((v) => v.value === visitId)?.marksAttended;
  const pai = useWatch({ control, name: 'paiScore' });
  const lesion = useWatch({ control, name: 'lesionDiameterMm' });
  const cbct = liveCbctPai(lesion);
  const visitFilms = films.filter((f) => f.visitId && f.visitId === visitId);
  const onCt = visitFilms.some((f) => f.modality === 'CT');
  const viewerUrl = (filmId: string) => `/cases/${caseId}/films/view?films=${[baselineFilmId, filmId].filter((x) => x && x !== filmId).concat(filmId).join(',')}`;
  const setPai = (score: number) => form.setValue('paiScore', score, { shouldDirty: true, shouldValidate: formState.isSubmitted });
  const setLesion = (mm: number) => form.setValue('lesionDiameterMm', mm, { shouldDirty: true, shouldValidate: formState.isSubmitted });
  const title = correcting ? `Correct the review of ${correcting.label}` : 'Record a review';

  const onSubmit = form.handleSubmit(async (values) => {
    setServerError(null);
    const url = correcting ? `/api/cases/${caseId}/reviews/${correcting.reviewId}/correction` : `/api/cases/${caseId}/reviews`;
    const sent = await submitJson(url, 'POST', values, { setError: form.setError });
    if (!sent.ok) {
      setServerError(sent.message ?? 'The review could not be saved.');
      return;
    }
    form.reset();
    setSaved(true);
    closeForm();
    router.refresh();
  });

  if (!open) {
    return (
      <div className="space-y-2">
        {saved && (
          <Notice tone="ok" role="status">
            {correcting ? 'Correction saved' : 'Review saved'}: it is in the Reviews table, with the outcome computed from it.
          </Notice>
        )}
        {correcting ? (
          <button ref={trigger} type="button" className="btn-secondary min-h-0 py-1 text-xs" onClick={openForm} aria-label={title}>
            Correct
          </button>
        ) : (
          <button ref={trigger} type="button" className="btn-primary" onClick={openForm}>
            Record a review
          </button>
        )}
      </div>
    );
  }
  return (
    <form id={correcting ? undefined : 'record-review'} onSubmit={onSubmit} noValidate aria-label={title} className="space-y-4 rounded-md border border-bone-300 bg-white p-4 text-left">
      <h3 ref={heading} tabIndex={-1} className="text-lg">
        {title}
      </h3>
      {serverError && <Notice tone="alert">{serverError}</Notice>}
      {correcting && (
        <p className="text-sm text-ink-700">
          The earlier version is kept and shown as superseded; the outcome is computed again from what you save here. At visit: {correcting.visitLabel}.
        </p>
      )}
      <div className="grid gap-4 md:grid-cols-2">
        {!correcting && (
          <div>
            <Select label="At visit" placeholder="Unplanned review" options={visits} {...register('visitId')} error={e.visitId?.message} />
            {marks && <p className="mt-1 text-xs text-ink-700">Saving marks this visit attended.</p>}
          </div>
        )}
        <Field label="Review date" type="date" min={completionDate} {...register('reviewDate')} error={e.reviewDate?.message} />
        <Select label="Tooth status" options={optionsOf(TOOTH_STATUSES, TOOTH_STATUS_LABELS)} {...register('toothStatus')} error={e.toothStatus?.message} />
        {status !== 'extracted' && (
          <>
            <Select
              label="Periapical index (PAI) now"
              placeholder="Choose 1–5"
              options={PAI_OPTIONS}
              {...register('paiScore', num)}
              error={e.paiScore?.message}
            />
            <div>
              <Field label="Largest lesion diameter now (mm)" type="number" step={0.1} min={0} hint="0 when there is none." {...register('lesionDiameterMm', num)} error={e.lesionDiameterMm?.message} />
              {cbct && (
                <p className={`mt-1 text-xs ${onCt ? 'font-medium text-ink-900' : 'text-ink-700'}`} data-testid="cbct-pai" aria-live="polite">
                  CBCT-PAI by this diameter{onCt ? ' (this visit has a CT film)' : ', for a review on cone-beam CT'}: <strong>{cbct.label}</strong> — {cbct.description}
                </p>
              )}
            </div>
          </>
        )}
        {status !== 'extracted' && (
          <div className="md:col-span-2 space-y-2">
            <p className="field-label" id="pai-reference">
              PAI reference drawings (choose a score)
            </p>
            <div role="group" aria-labelledby="pai-reference" className="grid grid-cols-3 gap-2 sm:grid-cols-5">
              {([1, 2, 3, 4, 5] as PaiScore[]).map((score) => (
                <button
                  key={score}
                  type="button"
                  aria-pressed={Number(pai) === score}
                  aria-label={`PAI ${score}`}
                  onClick={() => setPai(score)}
                  className={`rounded-md border p-2 ${Number(pai) === score ? 'border-dura-600 bg-dura-50 ring-2 ring-dura-500' : 'border-bone-300 bg-white hover:bg-bone-100'}`}
                >
                  <PaiReferenceDrawing score={score} />
                </button>
              ))}
            </div>
            <p className="text-xs text-ink-500">{PAI_REFERENCE_CAUTION}</p>
          </div>
        )}
        {!correcting && visitFilms.length > 0 && (
          <div className="md:col-span-2 space-y-1 rounded-md bg-bone-100 p-3 text-sm" data-testid="review-films">
            <p className="font-medium">Films of this visit</p>
            <ul className="space-y-1">
              {visitFilms.map((f) => (
                <li key={f.id} className="flex flex-wrap items-center gap-2">
                  <a href={viewerUrl(f.id)}>Open {f.label} in the viewer</a>
                  {f.diameterMm != null && status !== 'extracted' && (
                    <button type="button" className="btn-secondary min-h-0 py-1 text-xs" onClick={() => setLesion(f.diameterMm!)}>
                      Use the measured {f.diameterMm.toFixed(1)} mm
                    </button>
                  )}
                </li>
              ))}
            </ul>
          </div>
        )}
        {EVENT_STATUSES.includes(status as ToothStatus) && (
          <Field
            label="Date of the event, if not today’s review"
            type="date"
            min={completionDate}
            hint="When it was done elsewhere or earlier; leave empty when it is the review date."
            {...register('eventDate', { shouldUnregister: true })}
            error={e.eventDate?.message}
          />
        )}
        {status === 'extracted' && (
          <Select
            label="Reason for the extraction"
            placeholder="Choose a reason"
            options={optionsOf(EXTRACTION_REASONS, EXTRACTION_REASON_LABELS)}
            {...register('extractionReason', { shouldUnregister: true })}
            error={e.extractionReason?.message}
          />
        )}
      </div>
      {status !== 'extracted' && (
        <CheckGroup legend="Clinical signs and symptoms">
          {REVIEW_SIGNS.map((s) => (
            <Check key={s} label={REVIEW_SIGN_LABELS[s]} {...register(s)} />
          ))}
        </CheckGroup>
      )}
      {status !== 'extracted' && <p className="text-xs text-ink-500">Any of these signs makes the outcome “disease”, except increased mobility, which is recorded only.</p>}
      <Field label="Other findings" {...register('otherFindings')} error={e.otherFindings?.message} />
      {correcting && <Field label="Why is it corrected?" {...register('reason')} error={e.reason?.message} />}
      <p className="text-xs text-ink-500">The outcome is computed from these findings by the published rules; it supports your judgement and does not replace it.</p>
      <div className="flex gap-3">
        <button type="submit" className="btn-primary" disabled={formState.isSubmitting}>
          {formState.isSubmitting ? 'Saving…' : correcting ? 'Save correction' : marks ? 'Save review and mark attended' : 'Save review'}
        </button>
        <button type="button" className="btn-secondary" onClick={closeForm}>
          Cancel
        </button>
      </div>
    </form>
  );
}

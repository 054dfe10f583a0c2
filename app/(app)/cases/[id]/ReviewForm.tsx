'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { useForm, useWatch, type Resolver } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
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
import { Field } from '@/components/ui/Field';
import { Select, optionsOf } from '@/components/ui/Select';
import { Notice } from '@/components/ui/Notice';
import { Check, CheckGroup } from '@/components/ui/Check';
import { PAI_OPTIONS } from '../_components/options';

type Shape = Record<string, unknown> & {
  visitId?: string;
  reviewDate: string;
  toothStatus: string;
  paiScore?: number;
  lesionDiameterMm?: number;
  otherFindings?: string;
  eventDate?: string;
  extractionReason?: string;
};

const num = { setValueAs: (v: unknown) => (v === '' || v === undefined ? undefined : Number(v)) };
// caseId and assessorId come from the page and the session; the form checks the rest with the API's schema.
const FormSchema = z.preprocess((v) => ({ ...(v as object), caseId: 'this-case', assessorId: 'me' }), ReviewCreateSchema);

/** The plain review entry form: findings in, outcome computed by the scoring rules on the server. */
export function ReviewForm({ caseId, visits, completionDate }: { caseId: string; visits: { value: string; label: string }[]; completionDate: string }) {
  const router = useRouter();
  const [open, setOpen] = useState(false);
  const [serverError, setServerError] = useState<string | null>(null);
  const form = useForm<Shape>({
    resolver: zodResolver(FormSchema as never, undefined, { raw: true }) as unknown as Resolver<Shape>,
    defaultValues: { toothStatus: 'present', reviewDate: new Date().toISOString().slice(0, 10), visitId: visits.at(-1)?.value ?? '' },
  });
  const { register, formState, control } = form;
  const e = formState.errors as Record<string, { message?: string } | undefined>;
  const status = useWatch({ control, name: 'toothStatus' });

  const onSubmit = form.handleSubmit(async (values) => {
    setServerError(null);
    const res = await fetch(`/api/cases/${caseId}/reviews`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(values) });
    const body = (await res.json().catch(() => ({}))) as { message?: string; fieldErrors?: Record<string, string[]> };
    if (!res.ok) {
      for (const [field, msgs] of Object.entries(body.fieldErrors ?? {})) form.setError(field, { message: msgs[0] });
      setServerError(body.message ?? 'The review could not be saved.');
      return;
    }
    form.reset();
    setOpen(false);
    router.refresh();
  });

  if (!open) {
    return (
      <button type="button" className="btn-primary" onClick={() => setOpen(true)}>
        Record a review
      </button>
    );
  }
  return (
    <form onSubmit={onSubmit} noValidate aria-label="Record a review" className="space-y-4 rounded-md border border-bone-300 p-4">
      <h3 className="text-lg">Record a review</h3>
      {serverError && <Notice tone="alert">{serverError}</Notice>}
      <div className="grid gap-4 md:grid-cols-2">
        <Select label="At visit" placeholder="Unplanned review" options={visits} {...register('visitId')} error={e.visitId?.message} />
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
            <Field label="Largest lesion diameter now (mm)" type="number" step={0.1} min={0} hint="0 when there is none." {...register('lesionDiameterMm', num)} error={e.lesionDiameterMm?.message} />
          </>
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
      <p className="text-xs text-ink-500">The outcome is computed from these findings by the published rules; it supports your judgement and does not replace it.</p>
      <div className="flex gap-3">
        <button type="submit" className="btn-primary" disabled={formState.isSubmitting}>
          {formState.isSubmitting ? 'Saving…' : 'Save review'}
        </button>
        <button type="button" className="btn-secondary" onClick={() => setOpen(false)}>
          Cancel
        </button>
      </div>
    </form>
  );
}

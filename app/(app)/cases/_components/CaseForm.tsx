'use client';
import { useEffect, useState } from 'react';
import { useRouter } from 'next/navigation';
import { useFieldArray, useForm, useWatch, type FieldErrors, type UseFormRegister } from 'react-hook-form';
import { schemaResolver } from '@/components/forms/schemaResolver';
import {
  APICAL_DIAGNOSES,
  APICAL_DIAGNOSIS_LABELS,
  CAPPING_MATERIALS,
  CASE_KINDS,
  CASE_KIND_LABELS,
  CASE_SECTION_LABELS,
  COMPLETION_RESTORATIONS,
  COMPLETION_RESTORATION_LABELS,
  COMPLICATIONS,
  COMPLICATION_LABELS,
  CaseCreateSchema,
  type CaseCreate,
  DEFINITIVE_RESTORATIONS,
  DEFINITIVE_RESTORATION_LABELS,
  FILLING_TECHNIQUES,
  FILLING_TECHNIQUE_LABELS,
  FILL_DENSITIES,
  ISO_APICAL_SIZES,
  MAX_CANALS,
  PREOP_SYMPTOMS,
  PREOP_SYMPTOM_LABELS,
  PULPAL_DIAGNOSES,
  PULPAL_DIAGNOSIS_LABELS,
  PULP_THERAPY_TYPES,
  RANGES,
  ROOT_END_FILLINGS,
  SEALER_CLASSES,
  SEALER_CLASS_LABELS,
  fieldsFor,
  type CaseKind,
  type CaseSection,
} from '@/lib/schemas/case';
import { fillLengthClass, FILL_LENGTH_LABELS, SCORING_CAUTION } from '@/lib/scoring';
import { formatTooth, parseFdi } from '@/lib/teeth';
import { Field } from '@/components/ui/Field';
import { Select, optionsOf } from '@/components/ui/Select';
import { Notice } from '@/components/ui/Notice';
import { Check, CheckGroup } from '@/components/ui/Check';
import { PAI_OPTIONS, codeOptions, isoSize, type Option } from './options';
import { submitJson } from '@/components/forms/submitJson';

/** What the form holds: strings from inputs, numbers through setValueAs. */
export interface CaseFormShape {
  patientId: string;
  tooth: string;
  kind: CaseKind;
  operatorId: string;
  referrerId?: string;
  startDate: string;
  completionDate?: string;
  pulpalDiagnosis: string;
  apicalDiagnosis: string;
  paiScore?: number;
  lesionDiameterMm?: number;
  preopSymptoms?: string[];
  sinusTract?: boolean;
  probingDepthMm?: number;
  canals?: { name: string; workingLengthMm?: number; apicalSize?: number; fillToApexMm?: number }[];
  fillingTechnique?: string;
  sealerClass?: string;
  apicalPatency?: boolean;
  complications?: string[];
  rootEndFilling?: string;
  pulpTherapyType?: string;
  cappingMaterial?: string;
  fillDensity?: string;
  coronalRestoration?: string;
  definitiveRestoration?: string;
  definitiveRestorationDate?: string;
  previousCaseId?: string;
}

/** A completed case of the same patient that a new case of its tooth may follow. */
export interface ToothCaseOption {
  id: string;
  toothFdi: number;
  label: string;
}

/** Kinds that treat a tooth treated before: a new one pre-selects the tooth's latest case. */
const FOLLOWING_KINDS: readonly CaseKind[] = ['nonsurgical_retreatment', 'apical_surgery'];

const num = { setValueAs: (v: unknown) => (v === '' || v === null || v === undefined ? undefined : Number(v)) };
const opt = { setValueAs: (v: unknown) => (v === '' ? undefined : v) };

export function CaseForm(props: {
  patient: { id: string; label: string };
  clinicians: Option[];
  referrers: Option[];
  notation: 'fdi' | 'universal';
  /** Set when editing: the case id and its stored values. */
  caseId?: string;
  initial?: Partial<CaseFormShape>;
  defaultOperatorId?: string;
  /** The patient's completed cases (newest first, this one left out), for the earlier-case link. */
  toothCases?: ToothCaseOption[];
}) {
  const router = useRouter();
  const [serverError, setServerError] = useState<string | null>(null);
  const form = useForm<CaseFormShape, unknown, CaseCreate>({
    // The same zod schema the API applies; fields that do not apply to the kind are dropped first.
    resolver: schemaResolver(CaseCreateSchema),
    mode: 'onBlur',
    defaultValues: {
      patientId: props.patient.id,
      kind: 'primary_treatment',
      operatorId: props.defaultOperatorId ?? '',
      canals: [{ name: '' }],
      preopSymptoms: [],
      complications: [],
      ...props.initial,
    },
  });
  const { register, control, formState } = form;
  const errors = formState.errors as FieldErrors<CaseFormShape> & Record<string, { message?: string }>;
  const kind = useWatch({ control, name: 'kind' }) as CaseKind;
  const tooth = useWatch({ control, name: 'tooth' });
  const canalValues = useWatch({ control, name: 'canals' }) ?? [];
  const canals = useFieldArray({ control, name: 'canals' });
  const previousCaseId = useWatch({ control, name: 'previousCaseId' });
  const parsedTooth = tooth ? parseFdi(tooth) : null;
  const toothFdi = parsedTooth?.ok ? parsedTooth.tooth.fdi : null;
  const earlierCases = (props.toothCases ?? []).filter((c) => c.toothFdi === toothFdi);
  const earlierIds = earlierCases.map((c) => c.id).join(',');
  useEffect(() => {
    const ids = earlierIds ? earlierIds.split(',') : [];
    // The link names a case of this tooth; a new retreatment or surgery of a tooth with an
    // earlier case links to its latest one until the clinician chooses otherwise.
    if (previousCaseId && !ids.includes(previousCaseId)) form.setValue('previousCaseId', '');
    else if (!props.caseId && !previousCaseId && ids.length && FOLLOWING_KINDS.includes(kind) && !form.getFieldState('previousCaseId').isDirty) {
      form.setValue('previousCaseId', ids[0]);
    }
  }, [earlierIds, kind, previousCaseId, props.caseId, form]);
  const shown = fieldsFor(kind);
  const has = (s: CaseSection) => shown.sections.includes(s);

  const toothHint = (() => {
    if (!tooth) return 'FDI two-digit notation (ISO 3950), e.g. 36.';
    const parsed = parseFdi(tooth);
    if (!parsed.ok) return undefined;
    const t = parsed.tooth;
    return `${t.name}${props.notation === 'universal' ? ` · Universal ${formatTooth(t.fdi, 'universal')}` : ''}`;
  })();

  const onSubmit = form.handleSubmit(async (values) => {
    setServerError(null);
    const sent = await submitJson<{ id?: string; case?: { id: string } }, CaseFormShape>(
      props.caseId ? `/api/cases/${props.caseId}` : '/api/cases',
      props.caseId ? 'PATCH' : 'POST',
      // '' clears the earlier-case link on an edit (the resolver turns an empty choice into undefined).
      { ...values, previousCaseId: values.previousCaseId ?? '' },
      { setError: form.setError },
    );
    if (!sent.ok) {
      setServerError(sent.message ?? 'The case could not be saved. Nothing was lost: check the fields marked below.');
      return;
    }
    const id = props.caseId ?? sent.data.id ?? sent.data.case?.id;
    router.push(`/cases/${id}`);
    router.refresh();
  }, () => setServerError('Some fields need attention. Nothing you typed was lost.'));

  const err = (name: string) => errors[name]?.message as string | undefined;

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-6" aria-label={props.caseId ? 'Edit case' : 'New case'}>
      {serverError && <Notice tone="alert">{serverError}</Notice>}

      <Section title={CASE_SECTION_LABELS.case}>
        <p className="text-sm text-ink-700 md:col-span-2">
          Patient: <strong>{props.patient.label}</strong>
        </p>
        <Field label="Tooth (FDI)" inputMode="numeric" {...register('tooth')} hint={toothHint} error={err('tooth')} />
        <Select label="Kind of treatment" options={optionsOf(CASE_KINDS, CASE_KIND_LABELS)} {...register('kind')} error={err('kind')} />
        {earlierCases.length > 0 ? (
          <div className="md:col-span-2">
            <Select
              label="This treats the tooth of an earlier case (retreatment / surgery after …)"
              placeholder="No: not linked to an earlier case"
              options={earlierCases.map((c) => ({ value: c.id, label: c.label }))}
              {...register('previousCaseId')}
              error={err('previousCaseId')}
            />
            <p className="mt-1 text-xs text-ink-500">Linked, the tooth is followed for tooth loss across both treatments.</p>
          </div>
        ) : (
          err('previousCaseId') && <p className="field-error md:col-span-2">{err('previousCaseId')}</p>
        )}
        <Select label="Operator" placeholder="Choose the clinician" options={props.clinicians} {...register('operatorId')} error={err('operatorId')} />
        <Select label="Referred by" placeholder="Not referred" options={props.referrers} {...register('referrerId', opt)} error={err('referrerId')} />
        <Field label="Start date" type="date" {...register('startDate')} error={err('startDate')} />
        <Field
          label="Completion date (canal filling)"
          type="date"
          {...register('completionDate', opt)}
          hint="Completing the case creates its recall plan."
          error={err('completionDate')}
        />
      </Section>

      <Section title={CASE_SECTION_LABELS.diagnosis}>
        <Select label="Pulpal diagnosis" placeholder="Choose" options={optionsOf(PULPAL_DIAGNOSES, PULPAL_DIAGNOSIS_LABELS)} {...register('pulpalDiagnosis')} error={err('pulpalDiagnosis')} />
        <Select label="Apical diagnosis" placeholder="Choose" options={optionsOf(APICAL_DIAGNOSES, APICAL_DIAGNOSIS_LABELS)} {...register('apicalDiagnosis')} error={err('apicalDiagnosis')} />
        <Select
          label="Periapical index (PAI) before treatment"
          placeholder="Choose 1–5"
          options={PAI_OPTIONS}
          {...register('paiScore', num)}
          error={err('paiScore')}
        />
        <Field
          label="Largest lesion diameter (mm)"
          type="number"
          step={RANGES.lesionDiameterMm.step}
          min={RANGES.lesionDiameterMm.min}
          max={RANGES.lesionDiameterMm.max}
          hint="0 when there is no lesion."
          {...register('lesionDiameterMm', num)}
          error={err('lesionDiameterMm')}
        />
        <Checks label="Symptoms" name="preopSymptoms" options={optionsOf(PREOP_SYMPTOMS, PREOP_SYMPTOM_LABELS)} register={register} error={err('preopSymptoms')} />
        <div className="space-y-3">
          <Check label="Sinus tract" {...register('sinusTract')} />
          <Field
            label="Deepest probing depth (mm)"
            type="number"
            step={1}
            min={RANGES.probingDepthMm.min}
            max={RANGES.probingDepthMm.max}
            {...register('probingDepthMm', num)}
            error={err('probingDepthMm')}
          />
        </div>
      </Section>

      {has('canals') && (
        <Section title={CASE_SECTION_LABELS.canals} wide>
          {err('canals') && <p className="field-error md:col-span-2">{err('canals')}</p>}
          <div className="space-y-3 md:col-span-2">
            {canals.fields.map((f, i) => {
              const d = canalValues[i]?.fillToApexMm;
              const cls = typeof d === 'number' && Number.isFinite(d) ? safeFillClass(d) : null;
              const e = (k: string) => (errors.canals?.[i] as Record<string, { message?: string }> | undefined)?.[k]?.message;
              return (
                <fieldset key={f.id} className="grid gap-3 rounded-md border border-bone-200 p-3 md:grid-cols-5">
                  <legend className="px-1 text-sm font-medium">Canal {i + 1}</legend>
                  <Field label="Name" placeholder="MB, DB, P…" {...register(`canals.${i}.name`)} error={e('name')} />
                  <Field label="Working length (mm)" type="number" step={0.1} {...register(`canals.${i}.workingLengthMm`, num)} error={e('workingLengthMm')} />
                  <Select
                    label="Apical size (ISO)"
                    placeholder="—"
                    options={ISO_APICAL_SIZES.map((s) => ({ value: String(s), label: isoSize(s) }))}
                    {...register(`canals.${i}.apicalSize`, num)}
                    error={e('apicalSize')}
                  />
                  <Field
                    label="Filling end to apex (mm)"
                    type="number"
                    step={0.1}
                    hint={cls ? FILL_LENGTH_LABELS[cls] : 'From the completion film; negative = beyond.'}
                    {...register(`canals.${i}.fillToApexMm`, num)}
                    error={e('fillToApexMm')}
                  />
                  <div className="flex items-end">
                    <button type="button" className="btn-secondary" onClick={() => canals.remove(i)} disabled={canals.fields.length === 1}>
                      Remove canal {i + 1}
                    </button>
                  </div>
                </fieldset>
              );
            })}
            <button type="button" className="btn-secondary" onClick={() => canals.append({ name: '' })} disabled={canals.fields.length >= MAX_CANALS}>
              Add a canal
            </button>
          </div>
        </Section>
      )}

      {has('obturation') && (
        <Section title={CASE_SECTION_LABELS.obturation}>
          <Select label="Filling technique" placeholder="Choose" options={optionsOf(FILLING_TECHNIQUES, FILLING_TECHNIQUE_LABELS)} {...register('fillingTechnique', opt)} error={err('fillingTechnique')} />
          <Select label="Sealer class" placeholder="Choose" options={optionsOf(SEALER_CLASSES, SEALER_CLASS_LABELS)} {...register('sealerClass', opt)} error={err('sealerClass')} />
          <Check label="Apical patency kept" {...register('apicalPatency')} />
        </Section>
      )}

      {has('complications') && (
        <Section title={CASE_SECTION_LABELS.complications}>
          <Checks label="Complications" name="complications" options={optionsOf(COMPLICATIONS, COMPLICATION_LABELS)} register={register} error={err('complications')} />
        </Section>
      )}

      {has('surgery') && (
        <Section title={CASE_SECTION_LABELS.surgery}>
          <Select label="Root-end filling" placeholder="Choose" options={codeOptions(ROOT_END_FILLINGS)} {...register('rootEndFilling', opt)} error={err('rootEndFilling')} />
        </Section>
      )}

      {has('pulpTherapy') && (
        <Section title={CASE_SECTION_LABELS.pulpTherapy}>
          {shown.fields.includes('pulpTherapyType') && (
            <Select label="Pulp therapy" placeholder="Choose" options={codeOptions(PULP_THERAPY_TYPES)} {...register('pulpTherapyType', opt)} error={err('pulpTherapyType')} />
          )}
          <Select label="Capping material" placeholder="Choose" options={codeOptions(CAPPING_MATERIALS)} {...register('cappingMaterial', opt)} error={err('cappingMaterial')} />
        </Section>
      )}

      {has('afterTreatment') && (
        <Section title={CASE_SECTION_LABELS.afterTreatment}>
          <Select label="Density of the filling" placeholder="Choose" options={codeOptions(FILL_DENSITIES)} {...register('fillDensity', opt)} error={err('fillDensity')} />
          <p className="text-sm text-ink-700">The distance of each canal’s filling to the apex is entered with the canal above; Lamina classes it by the published cut-offs.</p>
        </Section>
      )}

      <Section title={CASE_SECTION_LABELS.restoration}>
        <Select
          label="Coronal restoration at completion"
          placeholder="Choose"
          options={optionsOf(COMPLETION_RESTORATIONS, COMPLETION_RESTORATION_LABELS)}
          {...register('coronalRestoration', opt)}
          error={err('coronalRestoration')}
        />
        <Select
          label="Definitive restoration"
          placeholder="Not yet"
          options={optionsOf(DEFINITIVE_RESTORATIONS, DEFINITIVE_RESTORATION_LABELS)}
          {...register('definitiveRestoration', opt)}
          error={err('definitiveRestoration')}
        />
        <Field label="Definitive restoration placed on" type="date" {...register('definitiveRestorationDate', opt)} error={err('definitiveRestorationDate')} />
      </Section>

      <p className="text-xs text-ink-500">{SCORING_CAUTION}</p>
      <div className="flex gap-3">
        <button type="submit" className="btn-primary" disabled={formState.isSubmitting}>
          {formState.isSubmitting ? 'Saving…' : props.caseId ? 'Save changes' : 'Save case'}
        </button>
        <button type="button" className="btn-secondary" onClick={() => router.back()}>
          Cancel
        </button>
      </div>
    </form>
  );
}

function safeFillClass(d: number) {
  try {
    return fillLengthClass(d);
  } catch {
    return null;
  }
}

function Section({ title, children, wide }: { title: string; children: React.ReactNode; wide?: boolean }) {
  return (
    <section aria-label={title} className="card">
      <h2 className="mb-4 text-xl">{title}</h2>
      <div className={`grid gap-4 ${wide ? '' : 'md:grid-cols-2'}`}>{children}</div>
    </section>
  );
}

function Checks({
  label,
  name,
  options,
  register,
  error,
}: {
  label: string;
  name: 'preopSymptoms' | 'complications';
  options: Option[];
  register: UseFormRegister<CaseFormShape>;
  error?: string;
}) {
  return (
    <CheckGroup legend={label} error={error}>
      {options.map((o) => (
        <Check key={o.value} label={o.label} value={o.value} {...register(name)} />
      ))}
    </CheckGroup>
  );
}

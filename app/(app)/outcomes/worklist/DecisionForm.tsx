'use client';
import { useState } from 'react';
import Link from 'next/link';
import { useRouter } from 'next/navigation';
import { useForm, useWatch } from 'react-hook-form';
import type { z } from 'zod';
import { schemaResolver } from '@/components/forms/schemaResolver';
import { submitJson } from '@/components/forms/submitJson';
import { Field } from '@/components/ui/Field';
import { Notice } from '@/components/ui/Notice';
import { Select } from '@/components/ui/Select';
import { NEXT_STEPS, NEXT_STEP_LABELS, NEXT_STEP_DATE_LABELS, type NextStep } from '@/lib/outcomes/worklist';
import { APICAL_DIAGNOSES, APICAL_DIAGNOSIS_LABELS } from '@/lib/schemas/case';
import { DecisionInput } from '@/lib/schemas/outcomes-worklist';
import type { DecisionResult } from '@/lib/services/outcomes-worklist';

interface Shape {
  step: NextStep | '';
  date: string;
  note: string;
  apicalDiagnosis: string;
}

/** Records the next step for one case of the worklist (POST /api/outcomes/worklist/:id/decisions). */
export function DecisionForm({ caseId, tooth, current }: { caseId: string; tooth: string; current: { step: NextStep; date: string; note: string | null } | null }) {
  const router = useRouter();
  const [result, setResult] = useState<{ tone: 'ok' | 'alert'; text: string; link?: { href: string; label: string } } | null>(null);
  const form = useForm<Shape, unknown, z.output<typeof DecisionInput>>({
    resolver: schemaResolver(DecisionInput),
    defaultValues: { step: current?.step ?? '', date: current?.date ?? '', note: current?.note ?? '', apicalDiagnosis: '' },
  });
  const step = useWatch({ control: form.control, name: 'step' });
  const e = form.formState.errors;
  const onSubmit = form.handleSubmit(async (values) => {
    setResult(null);
    const sent = await submitJson<DecisionResult, Shape>(`/api/outcomes/worklist/${caseId}/decisions`, 'POST', values, { setError: form.setError });
    if (!sent.ok) {
      setResult({ tone: 'alert', text: sent.message ?? 'The next step could not be recorded. Nothing you typed was lost.' });
      return;
    }
    const r = sent.data;
    const parts = [r.created ? `${r.decision.stepLabel} recorded for tooth ${tooth}.` : 'This step was already recorded: nothing changed.'];
    if (r.visit) parts.push(r.visit.created ? `A recall visit is planned for ${r.visit.dueDate}.` : r.visit.message);
    if (r.linkedCase) parts.push(r.linkedCase.created ? 'A new case of the tooth was opened, in progress: complete it on its form.' : 'Linked to the tooth’s later case already in the registry.');
    setResult({ tone: 'ok', text: parts.join(' '), link: r.linkedCase ? { href: `/cases/${r.linkedCase.id}`, label: 'Open the later case' } : undefined });
    router.refresh();
  });
  const dateLabel = step ? NEXT_STEP_DATE_LABELS[step] : 'Date';
  return (
    <form onSubmit={onSubmit} noValidate className="space-y-3" aria-label={`Next step for tooth ${tooth}`}>
      {result && (
        <Notice tone={result.tone}>
          {result.text}{' '}
          {result.link && (
            <Link href={result.link.href} className="font-semibold">
              {result.link.label}
            </Link>
          )}
        </Notice>
      )}
      <Select label="Next step" placeholder="Choose…" options={NEXT_STEPS.map((s) => ({ value: s, label: NEXT_STEP_LABELS[s] }))} {...form.register('step')} error={e.step?.message} />
      <Field label={dateLabel} type="date" {...form.register('date')} error={e.date?.message} />
      {(step === 'retreat' || step === 'surgery') && (
        <Select
          label="Apical diagnosis (starts the new case)"
          placeholder="Choose…"
          options={APICAL_DIAGNOSES.map((d) => ({ value: d, label: APICAL_DIAGNOSIS_LABELS[d] }))}
          {...form.register('apicalDiagnosis')}
          error={e.apicalDiagnosis?.message}
        />
      )}
      <Field label="Note (optional, 300 characters)" maxLength={300} {...form.register('note')} error={e.note?.message} />
      <button type="submit" className="btn-primary" disabled={form.formState.isSubmitting}>
        {form.formState.isSubmitting ? 'Recording…' : 'Record the next step'}
      </button>
    </form>
  );
}

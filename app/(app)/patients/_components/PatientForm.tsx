'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { useForm, useWatch, type Resolver } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { PatientCreateSchema, RECALL_CHANNELS, SEXES } from '@/lib/schemas/patient';
import { Field } from '@/components/ui/Field';
import { Select } from '@/components/ui/Select';
import { Notice } from '@/components/ui/Notice';
import { Check } from '@/components/ui/Check';
import { codeOptions } from '../../cases/_components/options';
import { submitJson } from '@/components/forms/submitJson';

interface PatientShape {
  registryNumber: string;
  givenName: string;
  familyName: string;
  dateOfBirth: string;
  sex: string;
  email?: string;
  phone?: string;
  postalCode?: string;
  recallContact: boolean;
  recallChannel: string;
  researchUse: boolean;
  consentDate: string;
}

const today = () => new Date().toISOString().slice(0, 10);

export function PatientForm({ patientId, initial, then }: { patientId?: string; initial?: Partial<PatientShape>; then?: 'case' | 'patient' }) {
  const router = useRouter();
  const [serverError, setServerError] = useState<string | null>(null);
  const form = useForm<PatientShape>({
    resolver: zodResolver(PatientCreateSchema) as unknown as Resolver<PatientShape>,
    mode: 'onBlur',
    defaultValues: { sex: 'not_stated', recallContact: true, recallChannel: 'email', researchUse: false, consentDate: today(), ...initial },
  });
  const { register, formState, control } = form;
  const e = formState.errors;
  const recall = useWatch({ control, name: 'recallContact' });

  const onSubmit = form.handleSubmit(
    async (values) => {
      setServerError(null);
      const sent = await submitJson<{ patient?: { id: string }; id?: string }, PatientShape>(
        patientId ? `/api/patients/${patientId}` : '/api/patients',
        patientId ? 'PATCH' : 'POST',
        values,
        { setError: form.setError },
      );
      if (!sent.ok) {
        setServerError(sent.message ?? 'The patient could not be saved.');
        return;
      }
      const id = patientId ?? sent.data.patient?.id ?? sent.data.id;
      router.push(then === 'case' ? `/cases/new?patient=${id}` : `/patients/${id}`);
      router.refresh();
    },
    () => setServerError('Some fields need attention. Nothing you typed was lost.'),
  );

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-6" aria-label={patientId ? 'Edit patient' : 'New patient'}>
      {serverError && <Notice tone="alert">{serverError}</Notice>}
      <section aria-label="Identity" className="card grid gap-4 md:grid-cols-2">
        <h2 className="text-xl md:col-span-2">Identity</h2>
        <Field label="Registry number" {...register('registryNumber')} hint="The practice's own patient number." error={e.registryNumber?.message} />
        <Field label="Date of birth" type="date" {...register('dateOfBirth')} error={e.dateOfBirth?.message} />
        <Field label="Given name" autoComplete="off" {...register('givenName')} error={e.givenName?.message} />
        <Field label="Family name" autoComplete="off" {...register('familyName')} error={e.familyName?.message} />
        <Select label="Sex" options={codeOptions(SEXES)} {...register('sex')} error={e.sex?.message} />
      </section>
      <section aria-label="Contact" className="card grid gap-4 md:grid-cols-3">
        <h2 className="text-xl md:col-span-3">Contact</h2>
        <Field label="E-mail" type="email" autoComplete="off" {...register('email')} error={e.email?.message} />
        <Field label="Phone" type="tel" autoComplete="off" {...register('phone')} error={e.phone?.message} />
        <Field label="Postal code" autoComplete="off" {...register('postalCode')} error={e.postalCode?.message} />
      </section>
      <section aria-label="Consents" className="card grid gap-4 md:grid-cols-2">
        <h2 className="text-xl md:col-span-2">Consents</h2>
        <Check label="The patient agrees to be contacted for follow-up recalls" {...register('recallContact')} />
        <Select
          label="Recall contact by"
          options={codeOptions(recall ? RECALL_CHANNELS.filter((c) => c !== 'none') : RECALL_CHANNELS)}
          {...register('recallChannel')}
          error={e.recallChannel?.message}
        />
        <Check label="The patient agrees to research use of their anonymised data" {...register('researchUse')} />
        <Field label="Consents recorded on" type="date" {...register('consentDate')} error={e.consentDate?.message} />
      </section>
      <div className="flex gap-3">
        <button type="submit" className="btn-primary" disabled={formState.isSubmitting}>
          {formState.isSubmitting ? 'Saving…' : then === 'case' ? 'Save and record a case' : 'Save patient'}
        </button>
        <button type="button" className="btn-secondary" onClick={() => router.back()}>
          Cancel
        </button>
      </div>
    </form>
  );
}

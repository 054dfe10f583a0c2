'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { useFieldArray, useForm } from 'react-hook-form';
import type { PracticeSettingsView } from '@/lib/services/practice-settings';
import { defaultWindow } from '@/lib/schemas/recall-policy';
import { Notice } from '@/components/ui/Notice';
import { submitJson } from '@/components/forms/submitJson';

interface Shape {
  toothNotation: 'fdi' | 'universal';
  address: string;
  phone: string;
  contactEmail: string;
  milestones: { months: number; windowBeforeDays: number; windowAfterDays: number }[];
  minObservationDays: number;
}

const num = { valueAsNumber: true } as const;

export function SettingsForm({ initial }: { initial: PracticeSettingsView }) {
  const router = useRouter();
  const [result, setResult] = useState<{ tone: 'ok' | 'alert'; text: string } | null>(null);
  const form = useForm<Shape>({
    defaultValues: {
      toothNotation: initial.toothNotation,
      address: initial.contact.address ?? '',
      phone: initial.contact.phone ?? '',
      contactEmail: initial.contact.contactEmail ?? '',
      milestones: initial.recallPolicy.milestones,
      minObservationDays: initial.minObservationDays,
    },
  });
  const milestones = useFieldArray({ control: form.control, name: 'milestones' });

  const onSubmit = form.handleSubmit(async (values) => {
    setResult(null);
    const sent = await submitJson('/api/practice/settings', 'PATCH', {
      toothNotation: values.toothNotation,
      recallPolicy: { milestones: values.milestones },
      minObservationDays: values.minObservationDays,
      contact: { address: values.address, phone: values.phone, contactEmail: values.contactEmail },
    });
    if (!sent.ok) {
      const detail = Object.values(sent.fieldErrors).flat();
      setResult({ tone: 'alert', text: detail.length ? detail.join(' ') : (sent.message ?? 'The settings could not be saved.') });
      return;
    }
    setResult({ tone: 'ok', text: 'Settings saved. A changed recall policy applies to cases completed from now on.' });
    router.refresh();
  });

  return (
    <form onSubmit={onSubmit} noValidate className="space-y-6" aria-label="Practice settings">
      {result && <Notice tone={result.tone}>{result.text}</Notice>}
      <fieldset className="card space-y-3">
        <legend className="px-1 font-serif text-xl">How patients reach the practice</legend>
        <p className="text-sm text-ink-700">
          Shown in every reminder e-mail and calendar file, so patients can call or write. Left empty, messages say “contact the practice”.
        </p>
        <div>
          <label htmlFor="practice-address" className="field-label">
            Address
          </label>
          <input id="practice-address" className="field-input w-full" maxLength={300} autoComplete="street-address" {...form.register('address')} />
        </div>
        <div className="grid gap-3 sm:grid-cols-2">
          <div>
            <label htmlFor="practice-phone" className="field-label">
              Phone
            </label>
            <input id="practice-phone" type="tel" className="field-input w-full" maxLength={40} {...form.register('phone')} />
          </div>
          <div>
            <label htmlFor="practice-email" className="field-label">
              E-mail for patients
            </label>
            <input id="practice-email" type="email" className="field-input w-full" maxLength={254} {...form.register('contactEmail')} />
          </div>
        </div>
      </fieldset>
      <fieldset className="card space-y-2">
        <legend className="px-1 font-serif text-xl">Tooth numbering on screens</legend>
        <p className="text-sm text-ink-700">Teeth are always stored in FDI notation (ISO 3950); this only changes how they are shown.</p>
        <label className="flex items-center gap-2 text-sm">
          <input type="radio" value="fdi" className="accent-dura-700" {...form.register('toothNotation')} /> FDI two-digit (e.g. 36)
        </label>
        <label className="flex items-center gap-2 text-sm">
          <input type="radio" value="universal" className="accent-dura-700" {...form.register('toothNotation')} /> Universal 1–32 (e.g. 19)
        </label>
      </fieldset>
      <fieldset className="card space-y-3">
        <legend className="px-1 font-serif text-xl">Recall policy</legend>
        <p className="text-sm text-ink-700">
          Completing a case plans one follow-up visit per milestone. The European Society of Endodontology’s quality guidelines (2006) ask for
          a review at least at one year, and up to four years while healing is incomplete. Each visit has a window around its due date; a
          visit whose window ends without attendance is marked missed.
        </p>
        <table className="table-dense w-full" aria-label="Recall milestones">
          <thead>
            <tr>
              <th scope="col">Months after completion</th>
              <th scope="col">Window opens (days before)</th>
              <th scope="col">Window closes (days after)</th>
              <th scope="col">
                <span className="sr-only">Remove</span>
              </th>
            </tr>
          </thead>
          <tbody>
            {milestones.fields.map((f, i) => (
              <tr key={f.id}>
                <td>
                  <input aria-label={`Milestone ${i + 1}, months`} type="number" min={1} max={120} className="field-input w-28" {...form.register(`milestones.${i}.months`, num)} />
                </td>
                <td>
                  <input aria-label={`Milestone ${i + 1}, days before`} type="number" min={0} max={180} className="field-input w-28" {...form.register(`milestones.${i}.windowBeforeDays`, num)} />
                </td>
                <td>
                  <input aria-label={`Milestone ${i + 1}, days after`} type="number" min={0} max={365} className="field-input w-28" {...form.register(`milestones.${i}.windowAfterDays`, num)} />
                </td>
                <td>
                  <button type="button" className="btn-secondary" onClick={() => milestones.remove(i)} disabled={milestones.fields.length === 1}>
                    Remove
                  </button>
                </td>
              </tr>
            ))}
          </tbody>
        </table>
        <button
          type="button"
          className="btn-secondary"
          onClick={() => {
            const last = milestones.fields.at(-1)?.months ?? 0;
            const months = Math.min(120, last ? last * 2 : 6);
            milestones.append({ months, ...defaultWindow(months) });
          }}
        >
          Add a milestone
        </button>
      </fieldset>
      <fieldset className="card space-y-2">
        <legend className="px-1 font-serif text-xl">Minimum observation time</legend>
        <p className="text-sm text-ink-700">
          A lesion unchanged since treatment is scored “uncertain” at a review before this many days, and “disease” from then on (the ESE
          quality guidelines, 2006, judge at one year). A new or larger lesion, or a clinical sign, is disease at any time. Applies to reviews
          recorded from now on.
        </p>
        <label className="flex items-center gap-2 text-sm">
          <input type="number" min={0} max={1461} className="field-input w-28" {...form.register('minObservationDays', num)} /> days after completion
        </label>
      </fieldset>
      <button type="submit" className="btn-primary" disabled={form.formState.isSubmitting}>
        {form.formState.isSubmitting ? 'Saving…' : 'Save settings'}
      </button>
    </form>
  );
}

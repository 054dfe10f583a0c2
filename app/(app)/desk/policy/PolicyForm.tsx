'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { useForm } from 'react-hook-form';
import { ReminderPolicySchema, type ReminderPolicy } from '@/lib/schemas/reminder-policy';
import { schemaResolver } from '@/components/forms/schemaResolver';
import type { ReminderPolicyView } from '@/lib/services/recall-policy';
import { Field } from '@/components/ui/Field';
import { Notice } from '@/components/ui/Notice';
import { submitJson } from '@/components/forms/submitJson';

interface Shape {
  invitationWeeksBefore: number;
  secondInvitationAfterDays: number;
  lastNoticeDaysAfterDue: number;
  lostAfterUnansweredAttempts: number;
}

const num = { valueAsNumber: true } as const;

const FIELDS: { name: keyof Shape; label: string }[] = [
  { name: 'invitationWeeksBefore', label: 'First invitation (weeks before the due date)' },
  { name: 'secondInvitationAfterDays', label: 'Second invitation when no reply (days after the first)' },
  { name: 'lastNoticeDaysAfterDue', label: 'Last notice (days after the due date)' },
  { name: 'lostAfterUnansweredAttempts', label: 'Close as lost to follow-up after (unanswered attempts)' },
];

export function PolicyForm({ initial }: { initial: ReminderPolicyView }) {
  const router = useRouter();
  const [result, setResult] = useState<{ tone: 'ok' | 'alert'; text: string } | null>(null);
  const b = initial.bounds;
  const form = useForm<Shape, unknown, ReminderPolicy>({
    resolver: schemaResolver(ReminderPolicySchema),
    defaultValues: {
      invitationWeeksBefore: initial.policy.invitationWeeksBefore,
      secondInvitationAfterDays: initial.policy.secondInvitationAfterDays,
      lastNoticeDaysAfterDue: initial.policy.lastNoticeDaysAfterDue,
      lostAfterUnansweredAttempts: initial.policy.lostAfterUnansweredAttempts,
    },
  });
  const e = form.formState.errors;
  const onSubmit = form.handleSubmit(async (values) => {
    setResult(null);
    const sent = await submitJson('/api/recall/policy', 'PUT', { ...values, quietHours: initial.policy.quietHours }, { setError: form.setError });
    if (!sent.ok) {
      setResult({ tone: 'alert', text: sent.message ?? 'The policy could not be saved.' });
      return;
    }
    setResult({ tone: 'ok', text: 'Policy saved. The next scan uses it.' });
    router.refresh();
  });
  return (
    <form onSubmit={onSubmit} noValidate className="card max-w-2xl space-y-4" aria-label="Reminder policy">
      {result && <Notice tone={result.tone}>{result.text}</Notice>}
      {initial.lastNoticeOutsideWindows.length > 0 && (
        <Notice tone="info">
          For the {initial.lastNoticeOutsideWindows.join(', ')}-month visits the window closes before the last notice is due: those visits are
          marked missed first.
        </Notice>
      )}
      <div className="grid gap-4 md:grid-cols-2">
        {FIELDS.map((f) => (
          <Field
            key={f.name}
            label={f.label}
            type="number"
            min={b[f.name].min}
            max={b[f.name].max}
            {...form.register(f.name, num)}
            error={e[f.name]?.message}
          />
        ))}
      </div>
      <div className="flex gap-3">
        <button type="submit" className="btn-primary" disabled={form.formState.isSubmitting}>
          {form.formState.isSubmitting ? 'Saving…' : 'Save policy'}
        </button>
        <button type="button" className="btn-secondary" onClick={() => form.reset(initial.defaults)}>
          Use Lamina’s defaults
        </button>
      </div>
    </form>
  );
}

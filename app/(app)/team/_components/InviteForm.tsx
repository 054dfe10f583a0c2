'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import type { z } from 'zod';
import { InviteInput } from '@/lib/schemas/auth';
import { Field } from '@/components/ui/Field';
import { Notice } from '@/components/ui/Notice';
import { Check, CheckGroup } from '@/components/ui/Check';
import { ROLE_OPTIONS } from './roles';
import { submitJson } from '@/components/forms/submitJson';

type Values = z.input<typeof InviteInput>;

export function InviteForm() {
  const router = useRouter();
  const [result, setResult] = useState<{ tone: 'ok' | 'alert'; text: string } | null>(null);
  const form = useForm<Values>({ resolver: zodResolver(InviteInput), defaultValues: { email: '', name: '', roles: [] } });

  const onSubmit = form.handleSubmit(async (values) => {
    setResult(null);
    const sent = await submitJson('/api/team/invitations', 'POST', values, { setError: form.setError, fields: (field) => field in values });
    if (!sent.ok) {
      setResult({ tone: 'alert', text: sent.message ?? 'The invitation could not be sent.' });
      return;
    }
    setResult({ tone: 'ok', text: `Invitation sent to ${values.email}.` });
    form.reset();
    router.refresh();
  });

  return (
    <section aria-labelledby="invite-heading" className="card max-w-2xl space-y-4">
      <h2 id="invite-heading" className="text-xl">
        Invite a colleague
      </h2>
      <p className="text-sm text-ink-700">They receive an e-mail with a link. They join, with these roles, only when they accept: a new person by choosing a password, someone who already uses Lamina while signed in.</p>
      {result && <Notice tone={result.tone}>{result.text}</Notice>}
      <form onSubmit={onSubmit} noValidate className="space-y-4">
        <div className="grid gap-4 md:grid-cols-2">
          <Field label="Name" autoComplete="off" {...form.register('name')} error={form.formState.errors.name?.message} />
          <Field label="E-mail" type="email" autoComplete="off" {...form.register('email')} error={form.formState.errors.email?.message} />
        </div>
        <CheckGroup legend="Roles" error={form.formState.errors.roles?.message} errorId="invite-roles-error">
          {ROLE_OPTIONS.map((o) => (
            <Check key={o.value} label={o.label} value={o.value} {...form.register('roles')} />
          ))}
        </CheckGroup>
        <button type="submit" className="btn-primary" disabled={form.formState.isSubmitting}>
          {form.formState.isSubmitting ? 'Sending…' : 'Send invitation'}
        </button>
      </form>
    </section>
  );
}

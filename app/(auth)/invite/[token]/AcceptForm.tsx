'use client';
import { useActionState, useState } from 'react';
import { Field } from '@/components/ui/Field';
import { Notice } from '@/components/ui/Notice';
import { acceptInvitationAction, acceptSignedInAction } from './actions';

/** A new person: name and password, through the link. */
export function AcceptForm({ token }: { token: string }) {
  const [state, formAction, pending] = useActionState(acceptInvitationAction, null);
  // Keep what was typed when the server answers with an error.
  const [name, setName] = useState('');
  const [password, setPassword] = useState('');
  const [confirm, setConfirm] = useState('');
  const errors = state && !state.ok ? (state.fieldErrors ?? {}) : {};
  return (
    <form action={formAction} className="space-y-4" noValidate>
      {state && !state.ok && <Notice tone="alert">{state.message}</Notice>}
      <input type="hidden" name="token" value={token} />
      <Field label="Your name" name="name" autoComplete="name" value={name} onChange={(e) => setName(e.target.value)} error={errors.name?.[0]} required />
      <Field label="Password" name="password" type="password" autoComplete="new-password" hint="At least 12 characters." value={password} onChange={(e) => setPassword(e.target.value)} error={errors.password?.[0]} required />
      <Field label="Password again" name="confirm" type="password" autoComplete="new-password" value={confirm} onChange={(e) => setConfirm(e.target.value)} error={errors.confirm?.[0]} required />
      <button type="submit" className="btn-primary w-full" disabled={pending}>
        {pending ? 'Saving…' : 'Accept invitation'}
      </button>
    </form>
  );
}

/** Someone with an account, signed in as the invited account: one explicit yes. */
export function AcceptSignedInForm({ token, practiceName }: { token: string; practiceName: string }) {
  const [state, formAction, pending] = useActionState(acceptSignedInAction, null);
  return (
    <form action={formAction} className="space-y-4">
      {state && !state.ok && <Notice tone="alert">{state.message}</Notice>}
      <input type="hidden" name="token" value={token} />
      <button type="submit" className="btn-primary w-full" disabled={pending}>
        {pending ? 'Joining…' : `Join ${practiceName}`}
      </button>
    </form>
  );
}

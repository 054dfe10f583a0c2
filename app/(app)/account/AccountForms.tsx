'use client';
import { useActionState, useEffect, useState, useTransition } from 'react';
import { signOut } from 'next-auth/react';
import { Field } from '@/components/ui/Field';
import { Notice } from '@/components/ui/Notice';
import { changePasswordAction, signOutEverywhereAction } from './actions';

export function AccountForms() {
  const [state, formAction, pending] = useActionState(changePasswordAction, null);
  const [current, setCurrent] = useState('');
  const [password, setPassword] = useState('');
  const [confirm, setConfirm] = useState('');
  const [ending, startEnding] = useTransition();
  const [endError, setEndError] = useState<string | null>(null);
  const errors = state && !state.ok ? (state.fieldErrors ?? {}) : {};

  // The password change ended every session, this one too: clear the cookie and sign in again.
  useEffect(() => {
    if (state?.ok) void signOut({ callbackUrl: '/sign-in?ended=password' });
  }, [state]);

  return (
    <>
      <section aria-labelledby="password-heading" className="card space-y-4">
        <h2 id="password-heading" className="text-xl">
          Change password
        </h2>
        <p className="text-sm text-ink-700">Changing it signs you out everywhere, this device included.</p>
        <form action={formAction} className="space-y-4" noValidate>
          {state && !state.ok && <Notice tone="alert">{state.message}</Notice>}
          {state?.ok && <Notice tone="ok">Password changed. Signing you out…</Notice>}
          <Field label="Current password" name="current" type="password" autoComplete="current-password" value={current} onChange={(e) => setCurrent(e.target.value)} error={errors.current?.[0]} required />
          <Field label="New password" name="password" type="password" autoComplete="new-password" hint="At least 12 characters." value={password} onChange={(e) => setPassword(e.target.value)} error={errors.password?.[0]} required />
          <Field label="New password again" name="confirm" type="password" autoComplete="new-password" value={confirm} onChange={(e) => setConfirm(e.target.value)} error={errors.confirm?.[0]} required />
          <button type="submit" className="btn-primary" disabled={pending}>
            {pending ? 'Saving…' : 'Change password'}
          </button>
        </form>
      </section>
      <section aria-labelledby="sessions-heading" className="card space-y-3">
        <h2 id="sessions-heading" className="text-xl">
          Sessions
        </h2>
        <p className="text-sm text-ink-700">
          Left Lamina open on another computer? Signing out everywhere ends every session of yours at once, on every
          device, this one included.
        </p>
        {endError && <Notice tone="alert">{endError}</Notice>}
        <button
          type="button"
          className="btn-secondary"
          disabled={ending}
          onClick={() =>
            startEnding(async () => {
              setEndError(null);
              const r = await signOutEverywhereAction();
              if (r?.ok) await signOut({ callbackUrl: '/sign-in?ended=everywhere' });
              else setEndError(r?.message ?? 'That did not work. Try again.');
            })
          }
        >
          {ending ? 'Signing out…' : 'Sign out everywhere'}
        </button>
      </section>
    </>
  );
}

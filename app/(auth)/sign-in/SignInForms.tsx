'use client';
import { useState } from 'react';
import { useForm } from 'react-hook-form';
import { zodResolver } from '@hookform/resolvers/zod';
import { signIn } from 'next-auth/react';
import { useRouter } from 'next/navigation';
import type { z } from 'zod';
import { LinkSignInInput, SignInInput } from '@/lib/schemas/auth';
import { Field } from '@/components/ui/Field';
import { Notice } from '@/components/ui/Notice';
import { safeReturnPath } from '@/lib/security/return-path';

type PasswordValues = z.input<typeof SignInInput>;
type LinkValues = z.input<typeof LinkSignInInput>;

export function SignInForms(props: { callbackUrl: string; initialEmail: string; notice?: string; error?: string }) {
  const router = useRouter();
  const [mode, setMode] = useState<'password' | 'link'>('password');
  const [serverError, setServerError] = useState<string | undefined>(props.error);
  const [linkSent, setLinkSent] = useState(false);

  const pw = useForm<PasswordValues>({ resolver: zodResolver(SignInInput), defaultValues: { email: props.initialEmail, password: '' } });
  const link = useForm<LinkValues>({ resolver: zodResolver(LinkSignInInput), defaultValues: { email: props.initialEmail } });

  const onPassword = pw.handleSubmit(async (values) => {
    setServerError(undefined);
    const res = await signIn('credentials', { ...values, redirect: false, callbackUrl: props.callbackUrl });
    if (!res || res.error) {
      setServerError(res?.error && res.error !== 'CredentialsSignin' ? res.error : 'Wrong e-mail or password.');
      return;
    }
    router.replace(safeReturnPath(props.callbackUrl));
    router.refresh();
  });

  const onLink = link.handleSubmit(async (values) => {
    setServerError(undefined);
    const res = await signIn('email', { email: values.email, redirect: false, callbackUrl: props.callbackUrl });
    if (res && (res.status === 422 || res.status === 429 || res.status === 503) && res.error) {
      // Too many link requests (or Redis away): the server's plain message says what to do.
      setServerError(res.error);
      return;
    }
    if (res?.error && res.error !== 'AccessDenied') {
      setServerError('The link could not be sent just now. Try again in a moment.');
      return;
    }
    setLinkSent(true);
  });

  return (
    <div className="space-y-5">
      <h1 className="text-2xl">Sign in</h1>
      {props.notice && <Notice tone="ok">{props.notice}</Notice>}
      {serverError && <Notice tone="alert">{serverError}</Notice>}

      <div role="tablist" aria-label="How to sign in" className="grid grid-cols-2 gap-1 rounded-md bg-bone-200 p-1">
        {(['password', 'link'] as const).map((m) => (
          <button
            key={m}
            type="button"
            role="tab"
            aria-selected={mode === m}
            onClick={() => setMode(m)}
            className={`rounded px-3 py-2 text-sm font-medium ${mode === m ? 'bg-white text-ink-900 shadow-card' : 'text-ink-700'}`}
          >
            {m === 'password' ? 'Password' : 'E-mailed link'}
          </button>
        ))}
      </div>

      {mode === 'password' ? (
        <form onSubmit={onPassword} noValidate className="space-y-4" aria-label="Sign in with password">
          <Field label="E-mail" type="email" autoComplete="username" {...pw.register('email')} error={pw.formState.errors.email?.message} />
          <Field
            label="Password"
            type="password"
            autoComplete="current-password"
            {...pw.register('password')}
            error={pw.formState.errors.password?.message}
          />
          <button type="submit" className="btn-primary w-full" disabled={pw.formState.isSubmitting}>
            {pw.formState.isSubmitting ? 'Signing in…' : 'Sign in'}
          </button>
        </form>
      ) : linkSent ? (
        <Notice tone="info">
          If that address belongs to a Lamina account, a sign-in link is on its way. It works once and expires in 24
          hours.
        </Notice>
      ) : (
        <form onSubmit={onLink} noValidate className="space-y-4" aria-label="Sign in with an e-mailed link">
          <Field label="E-mail" type="email" autoComplete="username" {...link.register('email')} error={link.formState.errors.email?.message} />
          <button type="submit" className="btn-primary w-full" disabled={link.formState.isSubmitting}>
            {link.formState.isSubmitting ? 'Sending…' : 'E-mail me a sign-in link'}
          </button>
        </form>
      )}
    </div>
  );
}

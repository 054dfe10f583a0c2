'use client';
import { useActionState } from 'react';
import { Notice } from '@/components/ui/Notice';
import { unsubscribeAction } from './actions';

export function UnsubscribeForm({ token }: { token: string }) {
  const [state, formAction, pending] = useActionState(unsubscribeAction, null);
  if (state) return <Notice tone={state.ok ? 'ok' : 'alert'}>{state.message}</Notice>;
  return (
    <form action={formAction}>
      <input type="hidden" name="token" value={token} />
      <button type="submit" className="btn-primary w-full" disabled={pending}>
        {pending ? 'Unsubscribing…' : 'Unsubscribe from review e-mails'}
      </button>
    </form>
  );
}

'use server';
import { headers } from 'next/headers';
import { redirect } from 'next/navigation';
import { requestEm } from '@/lib/db';
import { originFrom } from '@/lib/auth/origin';
import { getRequestContext } from '@/lib/auth/session';
import { acceptInvitation, acceptInvitationSignedIn } from '@/lib/services/team';
import { runAction, type ActionState } from '@/lib/actions';
import { NotSignedInError } from '@/lib/services/errors';

/** Public: for a new person the invitation token itself is the credential. */
export async function acceptInvitationAction(_prev: ActionState, formData: FormData): Promise<ActionState> {
  let email = '';
  const state = await runAction(async () => {
    const result = await acceptInvitation(await requestEm(), Object.fromEntries(formData), originFrom(await headers()));
    email = result.email;
  });
  if (state?.ok) redirect(`/sign-in?accepted=1&email=${encodeURIComponent(email)}`);
  return state;
}

/** Someone who already has an account accepts while signed in as that account. */
export async function acceptSignedInAction(_prev: ActionState, formData: FormData): Promise<ActionState> {
  const state = await runAction(async () => {
    const { em, userId } = await getRequestContext();
    if (!userId) throw new NotSignedInError('Sign in to accept the invitation.');
    await acceptInvitationSignedIn(em, userId, String(formData.get('token') ?? ''), originFrom(await headers()));
  });
  // The session stays in the practice it was in; the new one is offered by the practice switcher.
  if (state?.ok) redirect('/choose-practice?joined=1');
  return state;
}

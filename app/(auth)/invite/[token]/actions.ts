'use server';
import { headers } from 'next/headers';
import { redirect } from 'next/navigation';
import { requestEm } from '@/lib/db';
import { originFrom } from '@/lib/auth/origin';
import { acceptInvitation } from '@/lib/services/team';
import { runAction, type ActionState } from '@/lib/actions';

/** Public: the invitation token itself is the credential. */
export async function acceptInvitationAction(_prev: ActionState, formData: FormData): Promise<ActionState> {
  let email = '';
  const state = await runAction(async () => {
    const result = await acceptInvitation(await requestEm(), Object.fromEntries(formData), originFrom(await headers()));
    email = result.email;
  });
  if (state?.ok) redirect(`/sign-in?accepted=1&email=${encodeURIComponent(email)}`);
  return state;
}

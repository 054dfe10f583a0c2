'use server';
import { requireActor } from '@/lib/auth/session';
import { runAction, type ActionState } from '@/lib/actions';
import { changePassword, signOutEverywhere } from '@/lib/services/account';

export async function changePasswordAction(_prev: ActionState, formData: FormData): Promise<ActionState> {
  const { em, actor } = await requireActor(undefined, '/account');
  return runAction(() => changePassword(em, actor, Object.fromEntries(formData)));
}

export async function signOutEverywhereAction(): Promise<ActionState> {
  const { em, actor } = await requireActor(undefined, '/account');
  return runAction(() => signOutEverywhere(em, actor));
}

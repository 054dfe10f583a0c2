'use server';
import { headers } from 'next/headers';
import { requestEm } from '@/lib/db';
import { originFrom } from '@/lib/auth/origin';
import { unsubscribe } from '@/lib/services/recall-replies';

export type UnsubscribeState = null | { ok: boolean; message: string };

/** Public: the signed unsubscribe token is the credential. */
export async function unsubscribeAction(_prev: UnsubscribeState, formData: FormData): Promise<UnsubscribeState> {
  const token = formData.get('token');
  try {
    const result = await unsubscribe(await requestEm(), typeof token === 'string' ? token : '', originFrom(await headers()), 'page');
    return { ok: result.ok, message: result.message };
  } catch (e) {
    console.error('[unsubscribe] unexpected error', e);
    return { ok: false, message: 'Something went wrong on our side. Nothing was changed; please try again or contact the practice.' };
  }
}

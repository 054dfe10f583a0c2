'use server';
import { headers } from 'next/headers';
import { requestEm } from '@/lib/db';
import { originFrom } from '@/lib/auth/origin';
import { ServiceError } from '@/lib/services/errors';
import { answerReply } from '@/lib/services/recall-replies';

export type ReplyState =
  | null
  | { ok: true; message: string }
  | { ok: false; message: string; refused?: boolean; fieldErrors?: Record<string, string[]> };

/** Public: the signed reply token is the credential; it works once. */
export async function answerReplyAction(_prev: ReplyState, formData: FormData): Promise<ReplyState> {
  try {
    const result = await answerReply(await requestEm(), Object.fromEntries(formData), originFrom(await headers()));
    return result.ok ? { ok: true, message: result.message } : { ok: false, refused: true, message: result.message };
  } catch (e) {
    if (e instanceof ServiceError) return { ok: false, message: e.message, fieldErrors: e.fieldErrors };
    console.error('[reply] unexpected error', e);
    return { ok: false, message: 'Something went wrong on our side. Nothing was changed; please try again or contact the practice.' };
  }
}

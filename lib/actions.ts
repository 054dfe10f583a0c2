import 'server-only';
import { ServiceError } from '@/lib/services/errors';
import { isServiceUnavailable, UNAVAILABLE_MESSAGE } from '@/lib/services/unavailable';

/** What a server action returns to its form: success, or messages per field plus a summary. */
export type ActionState = { ok: true; message?: string } | { ok: false; message: string; fieldErrors?: Record<string, string[]> } | null;

/** Runs an action body and turns service errors into form state; unexpected errors are logged. */
export async function runAction(fn: () => Promise<string | void>): Promise<ActionState> {
  try {
    const message = await fn();
    return { ok: true, message: message ?? undefined };
  } catch (e) {
    if (e instanceof ServiceError) return { ok: false, message: e.message, fieldErrors: e.fieldErrors };
    if (isNextControlFlow(e)) throw e;
    if (isServiceUnavailable(e)) return { ok: false, message: UNAVAILABLE_MESSAGE };
    console.error('[action] unexpected error', e);
    return { ok: false, message: 'Something went wrong on our side. Nothing was changed.' };
  }
}

function isNextControlFlow(e: unknown): boolean {
  const digest = (e as { digest?: unknown } | null)?.digest;
  return typeof digest === 'string' && (digest.startsWith('NEXT_REDIRECT') || digest.startsWith('NEXT_HTTP_ERROR_FALLBACK'));
}

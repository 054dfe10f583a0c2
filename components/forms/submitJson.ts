import type { FieldPath, FieldValues, UseFormSetError } from 'react-hook-form';

/** What the API answers on a refusal (lib/api/handler): a message and, for bad input, messages per field. */
export interface ApiRefusal {
  message?: string;
  fieldErrors: Record<string, string[]>;
}

export type SubmitResult<T> = ({ ok: true } & { data: T }) | ({ ok: false } & ApiRefusal);

/**
 * Sends a form's values as JSON and reads the answer. On a refusal each field error is shown
 * on its field (its first message) when `setError` is given; `fields` limits that to the fields
 * the form has. The caller shows `message` (with its own fallback) and decides what follows.
 */
export async function submitJson<T = Record<string, unknown>, Shape extends FieldValues = FieldValues>(
  url: string,
  method: 'POST' | 'PATCH' | 'PUT',
  payload: unknown,
  options: { setError?: UseFormSetError<Shape>; fields?: (field: string) => boolean } = {},
): Promise<SubmitResult<T>> {
  const res = await fetch(url, { method, headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(payload) });
  const body = (await res.json().catch(() => ({}))) as { message?: string; fieldErrors?: Record<string, string[]> };
  if (res.ok) return { ok: true, data: body as T };
  const fieldErrors = body.fieldErrors ?? {};
  if (options.setError) {
    for (const [field, msgs] of Object.entries(fieldErrors)) {
      if (!options.fields || options.fields(field)) options.setError(field as FieldPath<Shape>, { message: msgs[0] });
    }
  }
  return { ok: false, message: body.message, fieldErrors };
}

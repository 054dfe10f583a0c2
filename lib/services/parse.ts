import type { z } from 'zod';
import { ValidationError } from './errors';

/** Parses input at the edge of a service; a failure becomes a 422 with messages per field. */
export function parseInput<T extends z.ZodType>(schema: T, raw: unknown): z.infer<T> {
  const r = schema.safeParse(raw);
  if (!r.success) throw new ValidationError('Some fields need attention.', fieldErrorsOf(r.error));
  return r.data;
}

export function fieldErrorsOf(error: z.ZodError): Record<string, string[]> {
  const fieldErrors: Record<string, string[]> = {};
  for (const issue of error.issues) (fieldErrors[issue.path.join('.') || '_'] ??= []).push(issue.message);
  return fieldErrors;
}

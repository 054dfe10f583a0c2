/**
 * Small zod building blocks shared by the registry schemas (patient, referrer, case, review):
 * ids, calendar dates, optional text that forms send as '' and numbers with units and ranges.
 */
import { z } from 'zod';
import { isCalendarDate } from './calendar-date';

// --- text ---------------------------------------------------------------------------------------

/** C0 control characters other than tab, line feed and carriage return (notes have lines); DEL; the C1 controls. */
const CONTROL = /[\u0000-\u0008\u000B\u000C\u000E-\u001F\u007F-\u009F]/;
/** Half of a UTF-16 surrogate pair with no other half: not a character at all. */
const LONE_SURROGATE = /[\uD800-\uDBFF](?![\uDC00-\uDFFF])|(?<![\uD800-\uDBFF])[\uDC00-\uDFFF]/;

const codePoint = (ch: string) => `U+${ch.codePointAt(0)!.toString(16).toUpperCase().padStart(4, '0')}`;

/**
 * Why a text cannot be stored, or null. Control characters are invisible, break exports and
 * PostgreSQL refuses NUL (U+0000) outright; a lone surrogate is a broken character.
 */
export function textProblem(value: string): string | null {
  const control = CONTROL.exec(value);
  if (control) {
    return `Remove the invisible control character ${codePoint(control[0])} (character ${control.index + 1}): it cannot be stored. Nothing else you typed was lost.`;
  }
  const broken = LONE_SURROGATE.exec(value);
  return broken ? `Remove the broken character at position ${broken.index + 1} (half of a character pair): it cannot be stored.` : null;
}

export interface TextOptions {
  /** Most characters after trimming. */
  max: number;
  /** Said when the value is missing or blank; makes the text required (at least one character). */
  required?: string;
  /** Said when it is longer than `max`. */
  tooLong?: string;
}

/**
 * THE free-text type of every schema (names, notes, findings, search): trimmed, limited,
 * refusing control characters (NUL included) and broken characters with a message that says
 * which and where — a clear 422, never a database error.
 */
export function text(options: TextOptions) {
  const base = z.string({ error: options.required ?? 'Enter text.' }).trim();
  const sized = (options.required ? base.min(1, options.required) : base).max(options.max, options.tooLong ?? `At most ${options.max} characters.`);
  return sized.superRefine((value, ctx) => {
    const problem = textProblem(value);
    if (problem) ctx.addIssue({ code: 'custom', message: problem });
  });
}

/** A record id (UUID in the database; any non-empty token here so tests and imports can use keys). */
export const Id = z.string({ error: 'Missing id.' }).trim().min(1, 'Missing id.').max(64, 'Id too long.');

/** A calendar date 'YYYY-MM-DD' between 1900 and 2100. */
export function calendarDate(what = 'the date') {
  return z
    .string({ error: `Enter ${what} as YYYY-MM-DD.` })
    .trim()
    .refine(isCalendarDate, `Enter ${what} as a real date written YYYY-MM-DD, e.g. 2024-08-31.`)
    .refine((d) => d >= '1900-01-01' && d <= '2100-12-31', `Enter ${what} between 1900 and 2100.`);
}

/** '' (what an empty form field sends) and whitespace become undefined before `inner` runs. */
export function blankAsUndefined<T extends z.ZodType>(inner: T) {
  return z.preprocess((v) => (typeof v === 'string' && v.trim() === '' ? undefined : v), inner.optional());
}

export const Email = z
  .string({ error: 'Enter an e-mail address.' })
  .trim()
  .toLowerCase()
  .pipe(z.email({ error: 'Enter a valid e-mail address, e.g. name@example.org.' }).max(254, 'At most 254 characters.'));

/**
 * A number in `unit` between `min` and `max`, with a message that says both. `step` is the
 * recording precision (0.1 mm): more decimals are refused rather than rounded silently.
 */
export function measure(label: string, unit: string, min: number, max: number, step?: number) {
  let schema = z
    .number({ error: `Enter ${label} in ${unit}.` })
    .refine(Number.isFinite, `Enter ${label} in ${unit}.`)
    .refine((v) => v >= min && v <= max, `${capitalise(label)} must be between ${min} and ${max} ${unit}.`);
  if (step !== undefined) {
    const decimals = String(step).split('.')[1]?.length ?? 0;
    schema = schema.refine(
      (v) => Math.abs(v * 10 ** decimals - Math.round(v * 10 ** decimals)) < 1e-6,
      `Record ${label} to ${step} ${unit} at most.`,
    );
  }
  return schema;
}

export function wholeNumber(label: string, min: number, max: number, unit = '') {
  const u = unit ? ` ${unit}` : '';
  return z
    .number({ error: `Enter ${label}${u ? ` in${u}` : ''}.` })
    .int(`Enter ${label} as a whole number${u}.`)
    .min(min, `${capitalise(label)} must be between ${min} and ${max}${u}.`)
    .max(max, `${capitalise(label)} must be between ${min} and ${max}${u}.`);
}

export function capitalise(s: string): string {
  return s.charAt(0).toUpperCase() + s.slice(1);
}

/** A zod enum whose error lists the allowed values. */
export function oneOf<const T extends readonly [string, ...string[]]>(values: T, label: string) {
  // A form's empty select says what to choose; a wrong code (API, CSV) also lists the allowed ones.
  return z.enum(values, {
    error: (issue) => (issue.input === undefined || issue.input === '' ? `Choose ${label}.` : `Choose ${label}: ${values.join(', ')}.`),
  });
}

/**
 * De-identification of a research export (issue 14), pure: HIPAA Safe Harbor, 45 CFR
 * 164.514(b)(2) — the 18 kinds of identifier of (b)(2)(i)(A)–(R) removed — with what the rule lets
 * an export keep, each in one function here:
 * - (A) names, (F) phone numbers, (H) e-mail addresses, (I)–(K) medical record and account numbers,
 *   (R) any other unique identifying number or code: never reach the writer (the reader leaves them
 *   out, lib/cohorts/types.ts); the database ids that do reach it leave only as `pseudonym`s —
 *   HMAC-SHA256 under a secret made for the one export and never written or stored, so the codes
 *   cannot be linked back, nor across exports (the rule's (c) "re-identification code" is allowed
 *   when it is not derived from the person's information in a way that can be reversed);
 * - (B) geographic subdivisions smaller than a state: `postalPrefix` keeps the first three digits of
 *   a US ZIP code only where the rule allows it, otherwise nothing;
 * - (C) all elements of dates except the year: dates leave as days since the case's completion, the
 *   completion as its calendar year alone, ages as `ageBand`s with everyone 90 or older together
 *   ("90+"), as the rule requires for ages over 89;
 * - clinicians, referrers and practices leave as codes of the export (`codeBook`: C01, R01, P01…);
 * - free text (notes, findings) is not a variable of the catalogue at all.
 */
import { createHmac } from 'node:crypto';
import { ageOn, type CalendarDate } from '@/lib/registry/calendar-date';

/** The pseudonymous id of a patient (`pt-`) or a case (`cs-`): HMAC-SHA256 under the export's secret, 64 bits in hex. */
export function pseudonym(secret: Buffer, kind: 'patient' | 'case', id: string): string {
  return `${kind === 'patient' ? 'pt' : 'cs'}-${hmacHex(secret, `${kind}:${id}`).slice(0, 16)}`;
}

export function hmacHex(secret: Buffer, text: string): string {
  if (secret.length < 16) throw new RangeError('The export secret must be at least 16 bytes');
  return createHmac('sha256', secret).update(text).digest('hex');
}

/**
 * Codes for the ids of one kind (clinicians, referrers, practices) in one export: the ids are
 * ordered by their HMAC under the export's secret and numbered from 1 (C01, C02…; at least two
 * digits, more when there are more than 99), so a code says nothing about the person's name, id or
 * the order they joined, and the same person has the same code throughout the export.
 */
export function codeBook(secret: Buffer, kind: string, prefix: string, ids: Iterable<string>): Map<string, string> {
  const unique = [...new Set(ids)].map((id) => ({ id, h: hmacHex(secret, `${kind}:${id}`) }));
  unique.sort((a, b) => (a.h < b.h ? -1 : a.h > b.h ? 1 : 0));
  const width = Math.max(2, String(unique.length).length);
  return new Map(unique.map((u, i) => [u.id, `${prefix}${String(i + 1).padStart(width, '0')}`]));
}

/** Ages of 90 and over are one band (45 CFR 164.514(b)(2)(i)(C)). */
export const AGE_TOP = 90;

/**
 * The age band of an age in whole years: `width` 5 ("40-44") or 10 ("40-49"); 90 and over "90+".
 * A negative age (a date of birth after the completion: a data error) counts as 0.
 */
export function ageBand(age: number, width: 5 | 10): string {
  const a = Math.max(0, Math.floor(age));
  if (a >= AGE_TOP) return `${AGE_TOP}+`;
  const lo = Math.floor(a / width) * width;
  return `${lo}-${Math.min(lo + width - 1, AGE_TOP - 1)}`;
}

/** Age at completion, in whole years. */
export function ageAtCompletion(dateOfBirth: CalendarDate, completionDate: CalendarDate): number {
  return ageOn(dateOfBirth, completionDate);
}

/** Every age band code of a width, in order (the data dictionary's codes). */
export function ageBandCodes(width: 5 | 10): string[] {
  const out: string[] = [];
  for (let lo = 0; lo < AGE_TOP; lo += width) out.push(ageBand(lo, width));
  return [...out, `${AGE_TOP}+`];
}

/**
 * The three-digit ZIP code areas whose population is 20,000 or fewer (2000 US Census), which Safe
 * Harbor says must be written "000": HHS, Guidance Regarding Methods for De-identification of
 * Protected Health Information (2012), section 3.4 — list from memory; check it against the
 * current guidance before relying on it outside Lamina.
 */
export const RESTRICTED_ZIP3 = ['036', '059', '063', '102', '203', '556', '692', '790', '821', '823', '830', '831', '878', '879', '884', '890', '893'] as const;

/**
 * What of a postal code an export may keep (45 CFR 164.514(b)(2)(i)(B)): the initial three digits
 * of a US ZIP code (5 digits, or ZIP+4) when the area of all ZIP codes sharing them holds more than
 * 20,000 people, "000" when it does not (RESTRICTED_ZIP3); anything else (postal codes of other
 * countries, whose areas the rule does not measure) is dropped: null.
 */
export function postalPrefix(postalCode: string | null | undefined): string | null {
  const m = /^\s*(\d{3})\d{2}(?:-?\d{4})?\s*$/.exec(postalCode ?? '');
  if (!m) return null;
  return (RESTRICTED_ZIP3 as readonly string[]).includes(m[1]!) ? '000' : m[1]!;
}

/** A period of five calendar years holding `year` ("2015-2019"): the completion year generalised. */
export function yearPeriod(year: number): string {
  const lo = Math.floor(year / 5) * 5;
  return `${lo}-${lo + 4}`;
}

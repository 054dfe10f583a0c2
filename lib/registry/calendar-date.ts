/**
 * Calendar dates ('YYYY-MM-DD') for the registry: treatment dates, due dates, review dates,
 * dates of birth. They are days on the practice's calendar, not instants, so they are kept
 * as plain strings everywhere (schemas, API, CSV, database `date` columns).
 *
 * How time-zone drift is avoided: arithmetic goes through date-fns on a *local* `Date` set to
 * 12:00 of that day, and only the local year, month and day are read back. Noon is never
 * skipped or repeated by a daylight-saving change (those happen at night), and local fields
 * round-trip exactly whatever `TZ` the server runs in. Nothing here calls the clock: "today"
 * is always passed in by the caller (in the practice's time zone).
 */
import { addDays, addMonths } from 'date-fns';

/** A calendar date written 'YYYY-MM-DD'. */
export type CalendarDate = string;

const PATTERN = /^(\d{4})-(\d{2})-(\d{2})$/;

/** True when `value` is a real calendar date written 'YYYY-MM-DD' (2023-02-29 is not). */
export function isCalendarDate(value: unknown): value is CalendarDate {
  if (typeof value !== 'string') return false;
  const m = PATTERN.exec(value);
  if (!m) return false;
  const y = Number(m[1]);
  const mo = Number(m[2]);
  const d = Number(m[3]);
  if (mo < 1 || mo > 12 || d < 1) return false;
  return d <= daysInMonth(y, mo);
}

/** Days in month `month` (1–12) of `year`, Gregorian leap rule. */
export function daysInMonth(year: number, month: number): number {
  if (month === 2) return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0 ? 29 : 28;
  return [4, 6, 9, 11].includes(month) ? 30 : 31;
}

/** The local-noon `Date` of a calendar date; throws a RangeError for anything else. */
export function toLocalNoon(date: CalendarDate): Date {
  if (!isCalendarDate(date)) throw new RangeError(`Not a calendar date (YYYY-MM-DD): ${String(date)}`);
  const [y, m, d] = date.split('-').map(Number) as [number, number, number];
  const result = new Date(y, m - 1, d, 12, 0, 0, 0);
  // new Date(y, …) maps years 0–99 to 1900–1999; set the full year explicitly.
  result.setFullYear(y, m - 1, d);
  return result;
}

/** The calendar date of a `Date`, read from its local fields. */
export function fromLocalDate(value: Date): CalendarDate {
  const y = String(value.getFullYear()).padStart(4, '0');
  const m = String(value.getMonth() + 1).padStart(2, '0');
  const d = String(value.getDate()).padStart(2, '0');
  return `${y}-${m}-${d}`;
}

/**
 * `date` plus `months` calendar months, clamped at the end of the month
 * (2025-08-31 + 6 → 2026-02-28; 2023-08-31 + 6 → 2024-02-29). Negative months go back.
 */
export function addMonthsClamped(date: CalendarDate, months: number): CalendarDate {
  return fromLocalDate(addMonths(toLocalNoon(date), months));
}

/** `date` plus `days` days (negative goes back). */
export function addDaysTo(date: CalendarDate, days: number): CalendarDate {
  return fromLocalDate(addDays(toLocalNoon(date), days));
}

/** Whole days from `from` to `to` (positive when `to` is later). */
export function daysBetween(from: CalendarDate, to: CalendarDate): number {
  return dayNumber(to) - dayNumber(from);
}

/**
 * Days since 1970-01-01 of a calendar date: the proleptic Gregorian day count, so differences are
 * whole calendar days whatever the time zone (as differenceInCalendarDays of the local noons, without
 * its time-zone work: the outcomes area calls this millions of times). Kept per date string.
 */
const dayNumbers = new Map<string, number>();
function dayNumber(date: CalendarDate): number {
  let n = dayNumbers.get(date);
  if (n === undefined) {
    if (!isCalendarDate(date)) throw new RangeError(`Not a calendar date (YYYY-MM-DD): ${String(date)}`);
    const [y, m, d] = date.split('-').map(Number) as [number, number, number];
    const t = new Date(0);
    t.setUTCFullYear(y, m - 1, d); // the full year, also 0–99
    n = Math.round(t.getTime() / 86_400_000);
    if (dayNumbers.size >= 50_000) dayNumbers.clear();
    dayNumbers.set(date, n);
  }
  return n;
}

/** Orders two calendar dates: negative, zero or positive. 'YYYY-MM-DD' sorts as text. */
export function compareDates(a: CalendarDate, b: CalendarDate): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/** Whole years of age on `on` for someone born on `birth` (birthday on 29 February counts on 1 March in common years). */
export function ageOn(birth: CalendarDate, on: CalendarDate): number {
  const [by, bm, bd] = birth.split('-').map(Number) as [number, number, number];
  const [y, m, d] = on.split('-').map(Number) as [number, number, number];
  let age = y - by;
  if (m < bm || (m === bm && d < bd)) age -= 1;
  return age;
}

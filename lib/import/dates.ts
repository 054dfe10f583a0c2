/**
 * Dates in a practice's file: the order of day, month and year, reading a value under a chosen
 * order, and Excel serial dates. Pure.
 *
 * - `suggestDateOrder(values)` looks at the values: a first part above 12 can only be a day
 *   (day-month-year), a second part above 12 only a day (month-day-year), a four-digit first part
 *   a year (year-month-day). When every value has day and month ≤ 12 the values cannot tell, and
 *   there is no suggestion; when the values contradict each other there is none either.
 * - `parseDate(value, order)` reads one value under the chosen order into YYYY-MM-DD, or says why
 *   not: impossible (month 13, 31 February, serial 60 of the 1900 system), or ambiguous (a
 *   two-digit year; day and month ≤ 12 with no order chosen).
 * - Excel serial dates (a number counted in days): the 1900 system counts 1 = 1900-01-01 and
 *   keeps Lotus 1-2-3's fictitious 29 February 1900 as serial 60, so from 61 on a serial is one
 *   day more than the count from 1899-12-31; the 1904 system (a workbook setting, older Mac
 *   files) counts 0 = 1904-01-01. The time of day (the fraction) is dropped.
 * ISO values (YYYY-MM-DD) are read under any order: a four-digit first part is never a day.
 */

export const DATE_ORDERS = ['dmy', 'mdy', 'ymd'] as const;
export type DateOrder = (typeof DATE_ORDERS)[number];

export const DATE_ORDER_LABELS: Record<DateOrder, string> = {
  dmy: 'Day-month-year (31/12/2024)',
  mdy: 'Month-day-year (12/31/2024)',
  ymd: 'Year-month-day (2024-12-31)',
};

export type DateParse = { ok: true; iso: string } | { ok: false; reason: string; ambiguous?: boolean };

const MONTHS = ['jan', 'feb', 'mar', 'apr', 'may', 'jun', 'jul', 'aug', 'sep', 'oct', 'nov', 'dec'];

/** Days in a month of a (proleptic Gregorian) year. */
function daysIn(year: number, month: number): number {
  return new Date(Date.UTC(year, month, 0)).getUTCDate();
}

function iso(y: number, m: number, d: number): string {
  return `${String(y).padStart(4, '0')}-${String(m).padStart(2, '0')}-${String(d).padStart(2, '0')}`;
}

function checked(y: number, m: number, d: number, text: string): DateParse {
  if (m < 1 || m > 12) return { ok: false, reason: `“${text}”: there is no month ${m}.` };
  if (d < 1 || d > daysIn(y, m)) return { ok: false, reason: `“${text}”: ${MONTH_NAMES[m - 1]} ${y} has no day ${d}.` };
  if (y < 1850 || y > 2200) return { ok: false, reason: `“${text}”: the year ${y} is not plausible.` };
  return { ok: true, iso: iso(y, m, d) };
}

const MONTH_NAMES = ['January', 'February', 'March', 'April', 'May', 'June', 'July', 'August', 'September', 'October', 'November', 'December'];

const DAY_MS = 86_400_000;

/**
 * An Excel serial date to YYYY-MM-DD (the fraction, a time of day, is dropped). 1900 system by
 * default; `date1904` for workbooks that use the 1904 system.
 */
export function excelSerialToIso(serial: number, date1904 = false): DateParse {
  if (!Number.isFinite(serial)) return { ok: false, reason: `${serial} is not a date serial number.` };
  const n = Math.floor(serial);
  if (date1904) {
    if (n < 0) return { ok: false, reason: `${serial} is before the first day of the 1904 date system.` };
    return { ok: true, iso: new Date(Date.UTC(1904, 0, 1) + n * DAY_MS).toISOString().slice(0, 10) };
  }
  if (n < 1) return { ok: false, reason: `${serial} is before the first day of the 1900 date system.` };
  if (n === 60) return { ok: false, reason: 'Serial date 60 is 29 February 1900, a day that did not exist (a spreadsheet’s old leap-year error): check the date.' };
  const base = n < 60 ? Date.UTC(1899, 11, 31) : Date.UTC(1899, 11, 30);
  return { ok: true, iso: new Date(base + n * DAY_MS).toISOString().slice(0, 10) };
}

/** The parts of a written date: numbers, or a month name in place of a number. */
interface Parts {
  /** Numeric parts as written (strings keep their length: "05", "2024"). */
  nums: string[];
  /** A month named in words (1–12) and where it stood, if any. */
  month?: { value: number; at: number };
}

function split(text: string): Parts | null {
  // Drop a time of day: "03/04/2024 00:00", "2024-04-03T10:00:00Z".
  const t = text
    .trim()
    .replace(/[T\s]\d{1,2}:\d{2}(:\d{2}(\.\d+)?)?\s*(am|pm|z|[+-]\d{2}:?\d{2})?$/i, '')
    .trim()
    .replace(/,/g, ' ');
  const tokens = t.split(/[\s./-]+/).filter(Boolean);
  if (tokens.length !== 3) return null;
  const parts: Parts = { nums: [] };
  for (let i = 0; i < 3; i++) {
    const tok = tokens[i]!;
    if (/^\d{1,4}$/.test(tok)) {
      parts.nums.push(tok);
      continue;
    }
    const w = tok.toLowerCase().replace(/(st|nd|rd|th)$/, '');
    if (/^\d{1,2}$/.test(w)) {
      parts.nums.push(w);
      continue;
    }
    const m = MONTHS.indexOf(w.slice(0, 3));
    if (m < 0 || parts.month || (w.length > 3 && !MONTH_NAMES[m]!.toLowerCase().startsWith(w.replace(/\.$/, '')))) return null;
    parts.month = { value: m + 1, at: i };
    parts.nums.push('');
  }
  return parts;
}

/** A two-digit or four-digit year part. */
function year(text: string, raw: string): { ok: true; y: number } | { ok: false; reason: string; ambiguous?: boolean } {
  if (text.length === 4) return { ok: true, y: Number(text) };
  if (text.length <= 2) return { ok: false, ambiguous: true, reason: `“${raw}”: a two-digit year could be 19${text.padStart(2, '0')} or 20${text.padStart(2, '0')}; write the year with four digits.` };
  return { ok: false, reason: `“${raw}” is not a date.` };
}

/**
 * Reads a written date under the chosen order (null: no order chosen — only values that can be
 * read one way are accepted). A plain number of 5 digits is read as an Excel serial date.
 */
export function parseDate(text: string, order: DateOrder | null, options: { date1904?: boolean } = {}): DateParse {
  const raw = text.trim();
  if (raw === '') return { ok: false, reason: 'The date is blank.' };
  if (/^\d{5}(\.\d+)?$/.test(raw)) return excelSerialToIso(Number(raw), options.date1904);
  const parts = split(raw);
  if (!parts) return { ok: false, reason: `“${raw}” is not a date.` };
  const [a, b, c] = parts.nums as [string, string, string];

  // A month in words: the other two are day and year, by their form.
  if (parts.month) {
    const others = parts.nums.filter((_, i) => i !== parts.month!.at);
    const yi = others.findIndex((s) => s.length === 4);
    const yearText = yi >= 0 ? others[yi]! : others[others.length - 1]!;
    const dayText = yi >= 0 ? others[1 - yi]! : others[0]!;
    const y = year(yearText, raw);
    if (!y.ok) return y;
    return checked(y.y, parts.month.value, Number(dayText), raw);
  }

  // A four-digit first part is a year, whatever the order.
  if (a.length >= 3) {
    if (a.length !== 4) return { ok: false, reason: `“${raw}” is not a date.` };
    return checked(Number(a), Number(b), Number(c), raw);
  }
  if (c.length !== 4 && c.length > 2) return { ok: false, reason: `“${raw}” is not a date.` };
  if (order === 'ymd') {
    // 24/12/31 — a two-digit year first.
    return { ok: false, ambiguous: true, reason: `“${raw}”: a two-digit year could be 19${a} or 20${a}; write the year with four digits.` };
  }
  const y = year(c, raw);
  const first = Number(a);
  const second = Number(b);
  if (order === null) {
    if (first > 12 && second <= 12) order = 'dmy';
    else if (second > 12 && first <= 12) order = 'mdy';
    else if (first === second) order = 'dmy';
    else if (first <= 12 && second <= 12) {
      return {
        ok: false,
        ambiguous: true,
        reason: `“${raw}” could be ${describe(first, second)} or ${describe(second, first)}: choose the file’s date order.`,
      };
    }
  }
  if (!y.ok) return y;
  if (order === 'mdy') {
    if (first > 12 && second <= 12) return { ok: false, reason: `“${raw}”: there is no month ${first} — is the file day-month-year?` };
    return checked(y.y, first, second, raw);
  }
  if (second > 12 && first <= 12) return { ok: false, reason: `“${raw}”: there is no month ${second} — is the file month-day-year?` };
  return checked(y.y, second, first, raw);
}

function describe(day: number, month: number): string {
  return `${day} ${MONTH_NAMES[month - 1] ?? `month ${month}`}`;
}

export interface DateOrderSuggestion {
  /** The order the values point to; null when they cannot tell or contradict each other. */
  order: DateOrder | null;
  /** Why, in words, with an example value. */
  reason: string;
  /** How many values point to each order. */
  evidence: Record<DateOrder, number>;
  /** Values read that look like dates at all. */
  dates: number;
}

/** Suggests the date order from written values (blank, ISO-with-time and serial values count as they can). */
export function suggestDateOrder(values: Iterable<string>): DateOrderSuggestion {
  const evidence: Record<DateOrder, number> = { dmy: 0, mdy: 0, ymd: 0 };
  const example: Partial<Record<DateOrder, string>> = {};
  let dates = 0;
  for (const v of values) {
    const raw = v.trim();
    if (raw === '' || /^\d{5}(\.\d+)?$/.test(raw)) continue;
    const parts = split(raw);
    if (!parts || parts.month) continue;
    dates++;
    const [a, b] = parts.nums as [string, string, string];
    let order: DateOrder | null = null;
    if (a.length === 4) order = 'ymd';
    else if (Number(a) > 12 && Number(a) <= 31 && Number(b) <= 12) order = 'dmy';
    else if (Number(b) > 12 && Number(b) <= 31 && Number(a) <= 12) order = 'mdy';
    if (order) {
      evidence[order]++;
      example[order] ??= raw;
    }
  }
  const pointing = DATE_ORDERS.filter((o) => evidence[o] > 0);
  if (dates === 0) return { order: null, reason: 'No dates written as day, month and year were found.', evidence, dates };
  if (evidence.dmy > 0 && evidence.mdy > 0) {
    return {
      order: null,
      reason: `The dates contradict each other: “${example.dmy}” can only be day-month-year, “${example.mdy}” only month-day-year. Check the column.`,
      evidence,
      dates,
    };
  }
  const slashed = pointing.find((o) => o !== 'ymd');
  if (slashed) {
    const n = evidence[slashed];
    return {
      order: slashed,
      reason:
        slashed === 'dmy'
          ? `${n} date${n === 1 ? '' : 's'} such as “${example.dmy}” start with a number above 12, which can only be a day.`
          : `${n} date${n === 1 ? '' : 's'} such as “${example.mdy}” have a middle number above 12, which can only be a day.`,
      evidence,
      dates,
    };
  }
  if (evidence.ymd === dates) return { order: 'ymd', reason: `Every date starts with a four-digit year, e.g. “${example.ymd}”.`, evidence, dates };
  return {
    order: null,
    reason: 'Every date has day and month both 12 or less, so the values cannot tell the order: choose it.',
    evidence,
    dates,
  };
}

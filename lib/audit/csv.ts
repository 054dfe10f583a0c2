/**
 * CSV for spreadsheets, safe against formula injection (OWASP "CSV Injection"): a cell that starts
 * with = + - @, a tab or a carriage return gets a leading apostrophe, so a spreadsheet shows it as
 * text instead of running it; every cell is then quoted, with inner quotes doubled (RFC 4180).
 * Pure; no I/O. (Written for the audit export; a shared CSV writer may replace it.)
 */

const FORMULA_START = /^[=+\-@\t\r]/;

/** One cell: neutralised when it could start a formula, then quoted. */
export function csvSafeCell(value: string | number | boolean | null | undefined): string {
  if (value === null || value === undefined) return '""';
  let s = String(value);
  if (FORMULA_START.test(s)) s = `'${s}`;
  return `"${s.replace(/"/g, '""')}"`;
}

/** A header row and the data rows, lines ended with CRLF (RFC 4180). */
export function csvSafeTable(header: readonly string[], rows: readonly (readonly (string | number | boolean | null | undefined)[])[]): string {
  return [header, ...rows].map((r) => r.map(csvSafeCell).join(',')).join('\r\n') + '\r\n';
}

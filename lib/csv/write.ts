/**
 * The one CSV writer of Lamina: every CSV the product writes (templates, exports) goes through
 * `writeCsv`, so spreadsheet formulas typed into a record never run in the reader's spreadsheet.
 *
 * CSV injection (OWASP, "CSV Injection"): a cell that begins with `=`, `+`, `-`, `@`, a tab or
 * a carriage return is read by Excel, LibreOffice and Google Sheets as a formula
 * (`=HYPERLINK(...)` can send data away, `=cmd|...` ran commands in older Excel). Lamina stores
 * such values as typed and escapes them only on the way out: the cell gets a leading single
 * quote (which spreadsheets show as text and do not keep), and every cell that needs it is
 * quoted as RFC 4180 says (double quotes doubled). `readCsvCell` undoes the escape, so a file
 * Lamina wrote reads back to what was typed (the case import uses it).
 *
 * Numbers passed as numbers (not strings) are data, never formulas, and are written as they
 * are (a negative distance stays -0.5); a non-finite number, null and undefined are written
 * as an empty cell. Dates are written as their ISO text.
 */

/** A value a CSV cell can hold. */
export type CsvValue = string | number | boolean | Date | null | undefined;

/** The first characters that make a spreadsheet read a cell as a formula (OWASP). */
export const FORMULA_TRIGGERS = ['=', '+', '-', '@', '\t', '\r'] as const;

const TRIGGER = /^[=+\-@\t\r]/;
const ESCAPED = /^'[=+\-@\t\r]/;
const NEEDS_QUOTES = /[",\r\n;\t]|^\s|\s$/;

/** A text cell as a spreadsheet may safely read it: a leading quote before a formula trigger. */
export function neutraliseFormula(text: string): string {
  return TRIGGER.test(text) ? `'${text}` : text;
}

/** Undoes `neutraliseFormula` on a cell read back from a file Lamina wrote. */
export function readCsvCell(text: string): string {
  return ESCAPED.test(text) ? text.slice(1) : text;
}

/** One cell: neutralised, then quoted when it holds a delimiter, a quote, a line end or edge spaces. */
export function csvCell(value: CsvValue): string {
  let text: string;
  if (value === null || value === undefined) return '';
  if (typeof value === 'number') {
    if (!Number.isFinite(value)) return '';
    text = String(value);
  } else if (typeof value === 'boolean') text = value ? 'yes' : 'no';
  else if (value instanceof Date) text = Number.isNaN(value.getTime()) ? '' : value.toISOString();
  else text = neutraliseFormula(value);
  return NEEDS_QUOTES.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

export interface WriteCsvOptions {
  /** Line end; CRLF by default (RFC 4180, and what spreadsheets expect). */
  newline?: '\r\n' | '\n';
  /** Start with a UTF-8 byte order mark, so Excel reads accents right. Off by default. */
  bom?: boolean;
}

/** One line of a file, without its line end: the row's cells under the header's columns (a short row gets empty cells). */
function csvLine(header: readonly string[], row: readonly CsvValue[]): string {
  return header.map((_, i) => csvCell(row[i])).join(',');
}

/** A whole file: the header, then one line per row (rows shorter than the header get empty cells). */
export function writeCsv(header: readonly string[], rows: Iterable<readonly CsvValue[]>, options: WriteCsvOptions = {}): string {
  const newline = options.newline ?? '\r\n';
  const lines = [header.map(csvCell).join(',')];
  for (const row of rows) lines.push(csvLine(header, row));
  return `${options.bom ? '\uFEFF' : ''}${lines.join(newline)}${newline}`;
}

/** About how many characters `streamCsv` gathers before it hands a chunk on. */
export const CSV_CHUNK_CHARS = 64 * 1024;

/**
 * The same file as `writeCsv`, written as the rows arrive: for a download streamed while its rows
 * are read (the chunks joined are exactly `writeCsv(header, rows, options)`). Lines are handed on
 * in chunks of about CSV_CHUNK_CHARS; the header is the first chunk's start.
 */
export async function* streamCsv(header: readonly string[], rows: AsyncIterable<readonly CsvValue[]> | Iterable<readonly CsvValue[]>, options: WriteCsvOptions = {}): AsyncGenerator<string, void, undefined> {
  const newline = options.newline ?? '\r\n';
  let chunk = `${options.bom ? '\uFEFF' : ''}${header.map(csvCell).join(',')}${newline}`;
  for await (const row of rows) {
    chunk += csvLine(header, row) + newline;
    if (chunk.length >= CSV_CHUNK_CHARS) {
      yield chunk;
      chunk = '';
    }
  }
  if (chunk) yield chunk;
}

/** The same from objects: one column per key of `columns`, in that order. */
export function writeCsvObjects<T extends Record<string, CsvValue>>(
  columns: readonly (keyof T & string)[],
  rows: Iterable<T>,
  options: WriteCsvOptions = {},
): string {
  const out: CsvValue[][] = [];
  for (const r of rows) out.push(columns.map((c) => r[c]));
  return writeCsv(columns, out, options);
}

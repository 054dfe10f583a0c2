/**
 * Reads a table from the bytes of an uploaded file: CSV (UTF-8 with or without byte-order mark,
 * UTF-16 as spreadsheets' "Unicode text", else Windows-1252; comma, semicolon or tab, detected
 * from the header line) or an .xlsx workbook (exceljs; the first sheet or a chosen one). The kind
 * of file is told by its content, never its name: an .xlsx is a ZIP container holding a workbook;
 * other binary content (an old .xls, a PDF, an image) is refused with why.
 *
 * Result: the sheet names, the header (the first non-blank row) and the rows below it, each with
 * the line it starts on in the file (CSV: the text line, a quoted cell spanning lines counts at
 * its first line; .xlsx: the sheet's row number). Cells keep their type from a workbook: numbers,
 * booleans, dates ({ date: 'YYYY-MM-DD' }, read in the workbook's 1900 or 1904 system), the cached
 * result of a formula, the text of rich text and hyperlinks. Blank rows are skipped.
 * No I/O: the bytes come in, a table goes out.
 */
import Papa from 'papaparse';

export type Cell = string | number | boolean | null | { date: string };

export interface TableRow {
  /** The line (CSV) or row number (.xlsx) the row starts on, 1-based. */
  line: number;
  cells: Cell[];
}

export interface Table {
  format: 'csv' | 'xlsx';
  /** Sheet names of a workbook ([] for CSV). */
  sheets: string[];
  /** The sheet read (null for CSV). */
  sheet: string | null;
  /** CSV: the delimiter found. */
  delimiter?: ',' | ';' | '\t';
  /** The workbook counts dates in the 1904 system. */
  date1904: boolean;
  headers: string[];
  headerLine: number;
  rows: TableRow[];
}

export type ReadOutcome = { ok: true; table: Table } | { ok: false; reason: string; sheets?: string[] };

export type FileFormat = 'csv' | 'xlsx';

/** The kind of file by its first bytes; null for content that is neither CSV text nor .xlsx. */
export function detectFormat(bytes: Uint8Array): { format: FileFormat } | { format: null; reason: string } {
  const b = bytes;
  if (b.length >= 4 && b[0] === 0x50 && b[1] === 0x4b && (b[2] === 0x03 || b[2] === 0x05) && (b[3] === 0x04 || b[3] === 0x06)) return { format: 'xlsx' };
  if (b.length >= 4 && b[0] === 0xd0 && b[1] === 0xcf && b[2] === 0x11 && b[3] === 0xe0) {
    return { format: null, reason: 'This is an old-style Excel file (.xls): save it as .xlsx (Excel Workbook) or CSV and upload again.' };
  }
  if (b.length >= 4 && b[0] === 0x25 && b[1] === 0x50 && b[2] === 0x44 && b[3] === 0x46) return { format: null, reason: 'This is a PDF: upload a CSV or .xlsx file.' };
  const utf16 = b.length >= 2 && ((b[0] === 0xff && b[1] === 0xfe) || (b[0] === 0xfe && b[1] === 0xff));
  if (!utf16) {
    const n = Math.min(b.length, 8192);
    for (let i = 0; i < n; i++) {
      const c = b[i]!;
      if (c === 0 || (c < 0x09 && c !== 0) || (c > 0x0d && c < 0x20 && c !== 0x1b)) {
        return { format: null, reason: 'This file is neither CSV text nor an .xlsx workbook: upload a CSV or .xlsx file.' };
      }
    }
  }
  return { format: 'csv' };
}

/** A cell as text: numbers with a decimal point, dates YYYY-MM-DD, booleans yes/no. */
export function cellText(cell: Cell): string {
  if (cell === null) return '';
  if (typeof cell === 'string') return cell.trim();
  if (typeof cell === 'number') return Number.isInteger(cell) ? String(cell) : String(Math.round(cell * 1e9) / 1e9);
  if (typeof cell === 'boolean') return cell ? 'yes' : 'no';
  return cell.date;
}

export function isBlank(cell: Cell): boolean {
  return cell === null || (typeof cell === 'string' && cell.trim() === '');
}

/** Reads a CSV or .xlsx file. `sheet`: the sheet to read (default the first). */
export async function readTable(bytes: Uint8Array, options: { sheet?: string | null } = {}): Promise<ReadOutcome> {
  if (bytes.length === 0) return { ok: false, reason: 'The file is empty.' };
  const kind = detectFormat(bytes);
  if (kind.format === null) return { ok: false, reason: kind.reason };
  if (kind.format === 'xlsx') return readXlsx(bytes, options.sheet ?? null);
  return readCsvText(decodeText(bytes));
}

/** The text of a CSV file: UTF-8 (byte-order mark dropped), UTF-16 with its mark, else Windows-1252. */
export function decodeText(bytes: Uint8Array): string {
  if (bytes.length >= 2 && bytes[0] === 0xff && bytes[1] === 0xfe) return new TextDecoder('utf-16le').decode(bytes.subarray(2));
  if (bytes.length >= 2 && bytes[0] === 0xfe && bytes[1] === 0xff) return new TextDecoder('utf-16be').decode(bytes.subarray(2));
  try {
    return new TextDecoder('utf-8', { fatal: true, ignoreBOM: false }).decode(bytes);
  } catch {
    return new TextDecoder('windows-1252').decode(bytes);
  }
}

/** The delimiter of a CSV text: the most frequent of comma, semicolon and tab outside quotes on the first non-blank line. */
export function detectDelimiter(text: string): ',' | ';' | '\t' {
  const line = text.split(/\r\n?|\n/).find((l) => l.trim() !== '') ?? '';
  const counts = { ',': 0, ';': 0, '\t': 0 };
  let quoted = false;
  for (const ch of line) {
    if (ch === '"') quoted = !quoted;
    else if (!quoted && (ch === ',' || ch === ';' || ch === '\t')) counts[ch]++;
  }
  if (counts[';'] > counts[','] && counts[';'] >= counts['\t']) return ';';
  if (counts['\t'] > counts[','] && counts['\t'] > counts[';']) return '\t';
  return ',';
}

export function readCsvText(text: string): ReadOutcome {
  const normalised = text.replace(/^\uFEFF/, '').replace(/\r\n?/g, '\n');
  if (normalised.trim() === '') return { ok: false, reason: 'The file is empty.' };
  const delimiter = detectDelimiter(normalised);
  let headers: string[] | null = null;
  let headerLine = 1;
  const rows: TableRow[] = [];
  let lastCursor = 0;
  let line = 1;
  Papa.parse<string[]>(normalised, {
    delimiter,
    newline: '\n',
    skipEmptyLines: false,
    step: (result) => {
      const startLine = line;
      const end = result.meta.cursor;
      for (let i = lastCursor; i < end; i++) if (normalised.charCodeAt(i) === 10) line++;
      lastCursor = end;
      const cells = result.data;
      if (cells.every((c) => c.trim() === '')) return;
      if (!headers) {
        headers = cells.map((c) => c.trim());
        headerLine = startLine;
      } else rows.push({ line: startLine, cells });
    },
  });
  if (!headers) return { ok: false, reason: 'The file is empty.' };
  return { ok: true, table: { format: 'csv', sheets: [], sheet: null, delimiter, date1904: false, headers: trimHeaders(headers), headerLine, rows } };
}

function trimHeaders(headers: string[]): string[] {
  const h = [...headers];
  while (h.length > 0 && h[h.length - 1] === '') h.pop();
  return h;
}

type ExcelValue = unknown;

function excelCell(value: ExcelValue): Cell {
  if (value === null || value === undefined) return null;
  if (typeof value === 'string' || typeof value === 'number' || typeof value === 'boolean') return value;
  if (value instanceof Date) return Number.isNaN(value.getTime()) ? null : { date: value.toISOString().slice(0, 10) };
  if (typeof value === 'object') {
    const v = value as Record<string, unknown>;
    if (Array.isArray(v.richText)) return (v.richText as { text?: string }[]).map((r) => r.text ?? '').join('');
    if ('formula' in v || 'sharedFormula' in v) return excelCell(v.result);
    if ('error' in v) return String(v.error);
    if ('text' in v) return excelCell(v.text);
  }
  return String(value);
}

async function readXlsx(bytes: Uint8Array, sheet: string | null): Promise<ReadOutcome> {
  // exceljs is loaded on demand: only the import needs it.
  const { default: ExcelJS } = await import('exceljs');
  const workbook = new ExcelJS.Workbook();
  try {
    await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
  } catch {
    return { ok: false, reason: 'This file is a ZIP archive but not a readable .xlsx workbook: save it again as Excel Workbook (.xlsx) or CSV.' };
  }
  const sheets = workbook.worksheets.map((w) => w.name);
  if (sheets.length === 0) return { ok: false, reason: 'The workbook has no sheet.' };
  const ws = sheet === null ? workbook.worksheets[0]! : workbook.worksheets.find((w) => w.name === sheet);
  if (!ws) return { ok: false, reason: `The workbook has no sheet “${sheet}”; its sheets are ${sheets.map((s) => `“${s}”`).join(', ')}.`, sheets };
  const date1904 = Boolean((workbook.properties as { date1904?: boolean } | undefined)?.date1904);
  let headers: string[] | null = null;
  let headerLine = 1;
  const rows: TableRow[] = [];
  ws.eachRow({ includeEmpty: false }, (row, rowNumber) => {
    const count = row.cellCount;
    const cells: Cell[] = [];
    for (let c = 1; c <= Math.max(count, headers?.length ?? 0); c++) cells.push(excelCell(row.getCell(c).value));
    if (cells.every(isBlank)) return;
    if (!headers) {
      headers = trimHeaders(cells.map(cellText));
      headerLine = rowNumber;
    } else rows.push({ line: rowNumber, cells });
  });
  if (!headers) return { ok: false, reason: `The sheet “${ws.name}” is empty.`, sheets };
  return { ok: true, table: { format: 'xlsx', sheets, sheet: ws.name, date1904, headers, headerLine, rows } };
}

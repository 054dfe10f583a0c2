/**
 * A read table and the user's choices → canonical rows in the template's form, and the problems
 * found, by line and column. Pure.
 *
 * Choices: the target of each file column (a template key, or null to leave it out), the date
 * order (null: only dates that can be read one way pass; the others are listed as ambiguous), the
 * decimal mark, and the code chosen for each value of a coded column (values equal to a code,
 * its label or a synonym need none). Dates: typed date cells as they are, numbers in a date
 * column as Excel serial dates (the workbook's system), text under the date order. Numbers: typed
 * number cells as they are, text under the decimal mark. Blank stays blank.
 */
import { excelSerialToIso, parseDate, type DateOrder } from './dates';
import { codeFor, normaliseCodeValue } from './mapping';
import { canonicalNumber, parseNumber, type DecimalMark } from './numbers';
import { cellText, isBlank, type Cell, type Table } from './read';
import type { CanonicalRow, TemplateColumn, TemplateDescriptor } from './template';

export interface ImportChoices {
  /** For each file column (by index): the template key it fills, or null (left out). */
  columns: (string | null)[];
  dateOrder: DateOrder | null;
  decimalMark: DecimalMark;
  /** Template key → file value (trimmed, as written) → code. */
  codes: Record<string, Record<string, string>>;
}

export interface Problem {
  line: number;
  /** The template key (absent for a whole-row or whole-file problem). */
  column?: string;
  /** The file's own header of the column. */
  header?: string;
  value?: string;
  reason: string;
  /** impossible: cannot be right under any choice; ambiguous: could be read more than one way; invalid: the rest. */
  kind: 'impossible' | 'ambiguous' | 'invalid' | 'unmapped';
}

export interface CanonicalTable {
  /** The template keys mapped, in template order: the canonical header. */
  keys: string[];
  rows: { line: number; values: CanonicalRow }[];
  problems: Problem[];
}

/** Problems about the choices themselves (a template column chosen twice, an unknown key). */
export function checkChoices(table: Table, choices: ImportChoices, template: TemplateDescriptor): Problem[] {
  const problems: Problem[] = [];
  const keys = new Set(template.columns.map((c) => c.key));
  const used = new Map<string, number>();
  choices.columns.forEach((key, i) => {
    if (key === null || i >= table.headers.length) return;
    if (!keys.has(key)) {
      problems.push({ line: table.headerLine, column: key, header: table.headers[i], reason: `“${key}” is not a column of the template.`, kind: 'invalid' });
      return;
    }
    if (used.has(key)) {
      problems.push({
        line: table.headerLine,
        column: key,
        header: table.headers[i],
        reason: `Columns “${table.headers[used.get(key)!]}” and “${table.headers[i]}” are both mapped to ${key}: leave one out.`,
        kind: 'invalid',
      });
      return;
    }
    used.set(key, i);
  });
  return problems;
}

export function normalise(table: Table, choices: ImportChoices, template: TemplateDescriptor): CanonicalTable {
  const problems = checkChoices(table, choices, template);
  const byKey = new Map(template.columns.map((c) => [c.key, c]));
  const mapped: { index: number; column: TemplateColumn; header: string; codes: Map<string, string> }[] = [];
  const seen = new Set<string>();
  choices.columns.forEach((key, index) => {
    if (key === null || index >= table.headers.length || seen.has(key)) return;
    const column = byKey.get(key);
    if (!column) return;
    seen.add(key);
    const codes = new Map<string, string>();
    for (const [value, code] of Object.entries(choices.codes[key] ?? {})) codes.set(normaliseCodeValue(value), code);
    mapped.push({ index, column, header: table.headers[index]!, codes });
  });
  const order = new Map(template.columns.map((c, i) => [c.key, i]));
  mapped.sort((a, b) => order.get(a.column.key)! - order.get(b.column.key)!);
  const keys = mapped.map((m) => m.column.key);
  const rows: CanonicalTable['rows'] = [];
  for (const row of table.rows) {
    const values: CanonicalRow = {};
    for (const m of mapped) {
      const cell = row.cells[m.index] ?? null;
      const r = canonicalCell(cell, m.column, choices, table.date1904, m.codes);
      if (r.ok) values[m.column.key] = r.text;
      else {
        values[m.column.key] = '';
        problems.push({ line: row.line, column: m.column.key, header: m.header, value: cellText(cell), reason: r.reason, kind: r.kind });
      }
    }
    rows.push({ line: row.line, values });
  }
  problems.sort((a, b) => a.line - b.line || (order.get(a.column ?? '') ?? -1) - (order.get(b.column ?? '') ?? -1));
  return { keys, rows, problems };
}

type CellResult = { ok: true; text: string } | { ok: false; reason: string; kind: Problem['kind'] };

export function canonicalCell(cell: Cell, column: TemplateColumn, choices: Pick<ImportChoices, 'dateOrder' | 'decimalMark'>, date1904: boolean, codes: Map<string, string> = new Map()): CellResult {
  if (isBlank(cell)) return { ok: true, text: '' };
  switch (column.kind) {
    case 'date': {
      if (typeof cell === 'object' && cell !== null) return { ok: true, text: cell.date };
      if (typeof cell === 'boolean') return { ok: false, reason: `${cell ? 'TRUE' : 'FALSE'} is not a date.`, kind: 'invalid' };
      if (typeof cell === 'number') {
        // A number in a date column is an Excel serial date (the column lost its date format).
        const s = excelSerialToIso(cell, date1904);
        return s.ok ? { ok: true, text: s.iso } : { ok: false, reason: s.reason, kind: 'impossible' };
      }
      const r = parseDate(cell as string, choices.dateOrder, { date1904 });
      if (r.ok) return { ok: true, text: r.iso };
      return { ok: false, reason: r.reason, kind: r.ambiguous ? 'ambiguous' : /no month|has no day|did not exist|not plausible/.test(r.reason) ? 'impossible' : 'invalid' };
    }
    case 'number': {
      if (typeof cell === 'number') return { ok: true, text: canonicalNumber(cell) };
      if (typeof cell !== 'string') return { ok: false, reason: `${cellText(cell)} is not a number.`, kind: 'invalid' };
      const r = parseNumber(cell, choices.decimalMark);
      return r.ok ? { ok: true, text: r.text } : { ok: false, reason: r.reason, kind: 'invalid' };
    }
    case 'code': {
      const text = cellText(cell);
      const parts = column.multiple ? text.split(/[|;,]/).map((s) => s.trim()).filter(Boolean) : [text];
      const out: string[] = [];
      for (const p of parts) {
        const code = codes.get(normaliseCodeValue(p)) ?? codeFor(p, column);
        if (code === null || !(column.codes ?? []).some((c) => c.code === code)) {
          return { ok: false, reason: `“${p}” is not one of the codes of ${column.label}: map it to a code on the mapping step.`, kind: 'unmapped' };
        }
        if (!out.includes(code)) out.push(code);
      }
      return { ok: true, text: out.join('|') };
    }
    case 'text':
      return { ok: true, text: cellText(cell) };
  }
}

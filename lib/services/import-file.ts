import 'server-only';
import { z } from 'zod';
import type { EntityManager } from '@mikro-orm/postgresql';
import { ImportMappingSchema, type ImportMappingChoices } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { DATE_ORDERS, suggestDateOrder, type DateOrder, type DateOrderSuggestion } from '@/lib/import/dates';
import { suggestMapping, valueFit, type ColumnProposal } from '@/lib/import/mapping';
import { normalise, type CanonicalTable, type ImportChoices } from '@/lib/import/normalise';
import { suggestDecimalMark, type DecimalMark, type DecimalMarkSuggestion } from '@/lib/import/numbers';
import { cellText, readTable, type Table } from '@/lib/import/read';
import { headerSignature } from '@/lib/import/signature';
import type { TemplateColumn, TemplateDescriptor } from '@/lib/import/template';
import { audit } from './audit';
import { ServiceError, ValidationError } from './errors';

/**
 * Reading a practice's own file for an import (lib/import does the pure work): the preview the
 * mapping step shows, the choices a request sends, the practice's saved mapping for a file
 * layout, and the canonical rows an import checks. Shared by the case and review imports; each
 * passes its template descriptor.
 */

/** What a request may choose; anything left out is proposed (the saved mapping, else the suggestions). */
export const ImportFileOptionsSchema = z
  .object({
    sheet: z.string().max(200).nullable().optional(),
    dateOrder: z.enum(DATE_ORDERS, { error: 'dateOrder is dmy, mdy or ymd.' }).nullable().optional(),
    decimalMark: z.enum(['.', ','], { error: 'decimalMark is "." or ",".' }).optional(),
    /** For each column of the file, by position: the template key it fills, or null to leave it out. */
    columns: z.array(z.string().max(80).nullable()).max(1000).optional(),
    /** Template key → the file's value → code. */
    codes: z.record(z.string().max(80), z.record(z.string().max(300), z.string().max(80))).optional(),
  })
  .strict();
export type ImportFileOptions = z.infer<typeof ImportFileOptionsSchema>;

/** Reads the options form field (JSON text) of a multipart upload. */
export function parseOptionsField(value: unknown): ImportFileOptions | undefined {
  if (value === null || value === undefined || value === '') return undefined;
  if (typeof value !== 'string') throw new ValidationError('Some fields need attention.', { options: ['Send the options as JSON text.'] });
  let json: unknown;
  try {
    json = JSON.parse(value);
  } catch {
    throw new ValidationError('Some fields need attention.', { options: ['The options are not valid JSON.'] });
  }
  const parsed = ImportFileOptionsSchema.safeParse(json);
  if (!parsed.success) {
    throw new ValidationError('Some fields need attention.', {
      options: parsed.error.issues.map((i) => `${i.path.join('.') || 'options'}: ${i.message}`),
    });
  }
  return parsed.data;
}

/** Reads the file into a table, or refuses it (415 for a file that is neither CSV nor .xlsx, 422 for an unreadable one). */
export async function readImportTable(bytes: Uint8Array, sheet: string | null | undefined): Promise<Table> {
  const r = await readTable(bytes, { sheet: sheet ?? null });
  if (r.ok) return r.table;
  const wrongType = /neither CSV|\.xls\)|PDF/.test(r.reason);
  throw new ServiceError(r.reason, wrongType ? 415 : 422, { file: [r.reason] });
}

/** Rows sampled for suggestions (the whole file for the date order and decimal mark). */
const SAMPLE_ROWS = 200;

export interface ImportColumnPreview {
  index: number;
  header: string;
  /** Up to 5 distinct non-blank values, as text. */
  samples: string[];
  /** Distinct values with their counts (up to 60), for mapping coded values. */
  values: { value: string; count: number }[];
  /** More distinct values than listed. */
  moreValues: boolean;
  proposal: ColumnProposal;
}

export interface ImportPreview {
  template: { id: string; label: string; columns: TemplateColumn[] };
  format: 'csv' | 'xlsx';
  sheets: string[];
  sheet: string | null;
  delimiter: string | null;
  rows: number;
  headerLine: number;
  columns: ImportColumnPreview[];
  dateOrder: DateOrderSuggestion;
  decimalMark: DecimalMarkSuggestion;
  /** The choices proposed: the practice's saved mapping for this layout, else the suggestions. */
  proposed: { columns: (string | null)[]; dateOrder: DateOrder | null; decimalMark: DecimalMark; codes: Record<string, Record<string, string>> };
  /** The proposal comes from the practice's saved mapping of this layout (when it was saved). */
  saved: { updatedAt: string } | null;
}

function columnTexts(table: Table, index: number): string[] {
  return table.rows.map((r) => cellText(r.cells[index] ?? null));
}

async function savedMapping(em: EntityManager, actor: Actor, template: TemplateDescriptor, headers: string[]) {
  return em.findOne(ImportMappingSchema, { practice: actor.practiceId, template: template.id, signature: headerSignature(headers) });
}

function suggestions(table: Table, template: TemplateDescriptor) {
  const sample = table.rows.slice(0, SAMPLE_ROWS).map((r) => r.cells.map(cellText));
  const proposals = suggestMapping(table.headers, sample, template);
  const dateLike = { key: '_', label: '_', kind: 'date' } as const;
  const numberLike = { key: '_', label: '_', kind: 'number' } as const;
  const dateValues: string[] = [];
  const numberValues: string[] = [];
  table.headers.forEach((_, i) => {
    const target = template.columns.find((c) => c.key === proposals[i]!.target);
    const texts = table.rows.filter((r) => typeof r.cells[i] === 'string').map((r) => (r.cells[i] as string).trim());
    const sampleTexts = texts.slice(0, SAMPLE_ROWS);
    if (target?.kind === 'date' || (!target && (valueFit(sampleTexts, dateLike) ?? 0) >= 0.8)) dateValues.push(...texts);
    if (target?.kind === 'number' || (!target && (valueFit(sampleTexts, numberLike) ?? 0) >= 0.8)) numberValues.push(...texts);
  });
  return { proposals, dateOrder: suggestDateOrder(dateValues), decimalMark: suggestDecimalMark(numberValues) };
}

/** The preview of an uploaded file for the mapping step. Audited (the file names no record, so by template and size). */
export async function previewImportFile(em: EntityManager, actor: Actor, template: TemplateDescriptor, bytes: Uint8Array, sheet?: string | null): Promise<ImportPreview> {
  const table = await readImportTable(bytes, sheet);
  const { proposals, dateOrder, decimalMark } = suggestions(table, template);
  const saved = await savedMapping(em, actor, template, table.headers);
  const columns = table.headers.map((header, index) => {
    const counts = new Map<string, number>();
    for (const text of columnTexts(table, index)) if (text !== '') counts.set(text, (counts.get(text) ?? 0) + 1);
    const values = [...counts].sort((a, b) => b[1] - a[1] || a[0].localeCompare(b[0])).map(([value, count]) => ({ value, count }));
    return {
      index,
      header,
      samples: values.slice(0, 5).map((v) => v.value),
      values: values.slice(0, 60),
      moreValues: values.length > 60,
      proposal: proposals[index]!,
    };
  });
  const choices = saved?.choices;
  const keys = new Set(template.columns.map((c) => c.key));
  const proposed = {
    columns: table.headers.map((h, i) => {
      if (choices && h in choices.columns) {
        const key = choices.columns[h] ?? null;
        return key !== null && keys.has(key) ? key : null;
      }
      return proposals[i]!.target;
    }),
    dateOrder: choices ? choices.dateOrder : dateOrder.order,
    decimalMark: choices ? choices.decimalMark : (decimalMark.mark ?? '.'),
    codes: choices?.codes ?? {},
  };
  await audit(em, actor, {
    action: 'import.file_read',
    detail: { template: template.id, format: table.format, rows: table.rows.length, columns: table.headers.length, savedMapping: Boolean(saved) },
  });
  return {
    template: { id: template.id, label: template.label, columns: [...template.columns] },
    format: table.format,
    sheets: table.sheets,
    sheet: table.sheet,
    delimiter: table.delimiter ?? null,
    rows: table.rows.length,
    headerLine: table.headerLine,
    columns,
    dateOrder,
    decimalMark,
    proposed,
    saved: saved ? { updatedAt: saved.updatedAt.toISOString() } : null,
  };
}

export interface ResolvedImportFile {
  table: Table;
  choices: ImportChoices;
  canonical: CanonicalTable;
  /** Template key → the file's header for it (problems are reported under the file's own headers). */
  headerOf: Map<string, string>;
}

/**
 * Reads the file under the request's choices (anything left out is proposed as in the preview)
 * and normalises it to canonical rows. Saves the choices as the practice's mapping for the
 * layout (audited) when the request made any.
 */
export async function resolveImportFile(
  em: EntityManager,
  actor: Actor,
  template: TemplateDescriptor,
  bytes: Uint8Array,
  options: ImportFileOptions = {},
): Promise<ResolvedImportFile> {
  const table = await readImportTable(bytes, options.sheet);
  if (options.columns && options.columns.length !== table.headers.length) {
    throw new ValidationError('Some fields need attention.', {
      columns: [`The file has ${table.headers.length} columns but the mapping lists ${options.columns.length}: read the file again.`],
    });
  }
  const saved = await savedMapping(em, actor, template, table.headers);
  const s = options.columns && options.dateOrder !== undefined && options.decimalMark ? null : suggestions(table, template);
  const choices: ImportChoices = {
    columns: options.columns ?? table.headers.map((h, i) => (saved && h in saved.choices.columns ? (saved.choices.columns[h] ?? null) : s!.proposals[i]!.target)),
    dateOrder: options.dateOrder !== undefined ? options.dateOrder : saved ? saved.choices.dateOrder : s!.dateOrder.order,
    decimalMark: options.decimalMark ?? saved?.choices.decimalMark ?? s!.decimalMark.mark ?? '.',
    codes: options.codes ?? saved?.choices.codes ?? {},
  };
  const canonical = normalise(table, choices, template);
  const headerOf = new Map<string, string>();
  choices.columns.forEach((key, i) => {
    if (key !== null && !headerOf.has(key)) headerOf.set(key, table.headers[i]!);
  });
  if (options.columns) await saveMapping(em, actor, template, table, choices);
  return { table, choices, canonical, headerOf };
}

async function saveMapping(em: EntityManager, actor: Actor, template: TemplateDescriptor, table: Table, choices: ImportChoices): Promise<void> {
  const signature = headerSignature(table.headers);
  const stored: ImportMappingChoices = {
    columns: Object.fromEntries(table.headers.map((h, i) => [h, choices.columns[i] ?? null])),
    dateOrder: choices.dateOrder,
    decimalMark: choices.decimalMark,
    codes: choices.codes,
    sheet: table.sheet,
  };
  const now = new Date();
  await em
    .getKnex()
    .raw(
      `insert into import_mapping (id, practice_id, template, signature, headers, choices, updated_by_id, created_at, updated_at)
       values (gen_random_uuid(), ?, ?, ?, ?::jsonb, ?::jsonb, ?, ?, ?)
       on conflict (practice_id, template, signature) do update set headers = excluded.headers, choices = excluded.choices, updated_by_id = excluded.updated_by_id, updated_at = excluded.updated_at`,
      [actor.practiceId, template.id, signature, JSON.stringify(table.headers), JSON.stringify(stored), actor.userId, now, now],
    );
  await audit(em, actor, {
    action: 'import.mapping_saved',
    entityType: 'import_mapping',
    detail: {
      template: template.id,
      columns: choices.columns.filter((c) => c !== null).length,
      leftOut: choices.columns.filter((c) => c === null).length,
      dateOrder: choices.dateOrder,
      decimalMark: choices.decimalMark,
    },
  });
}

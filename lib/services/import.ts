import 'server-only';
import { randomUUID } from 'node:crypto';
import { z } from 'zod';
import { UniqueConstraintViolationException } from '@mikro-orm/core';
import type { EntityManager } from '@mikro-orm/postgresql';
import { PatientSchema, RecallVisitSchema, ReferrerSchema, TreatmentCaseSchema } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { planImportedVisits } from '@/lib/recall';
import { CASE_TEMPLATE } from '@/lib/import/case-template';
import { writeCsv } from '@/lib/csv/write';
import { parseCaseRecords, parseCasesCsv, readRecords, templateCsv, type CsvError, type ParseCasesResult, type ValidRow } from '@/lib/registry/csv';
import { CASE_KIND_LABELS, type CaseKind } from '@/lib/schemas/case';
import { formatTooth } from '@/lib/teeth';
import { audit } from './audit';
import { ConflictError } from './errors';
import { ImportFileOptionsSchema, resolveImportFile } from './import-file';
import { parseInput } from './parse';
import { caseColumns } from './cases';
import { patientColumns } from './patients';
import { bulkInsert, practiceSettings, todayIn } from './registry-common';
import { referrerKey } from './referrers';
import { visitSummary } from './visits';

/** Largest CSV accepted (a 10,000-row file is about 3 MB). */
export const IMPORT_MAX_BYTES = 20 * 1024 * 1024;
/** The refusal of a file past IMPORT_MAX_BYTES (413 at the routes, a field error in the schemas). */
export const IMPORT_TOO_LARGE = `The file is larger than ${IMPORT_MAX_BYTES / 1024 / 1024} MB: split it.`;

/** A practice's own file (CSV or .xlsx) as sent: not empty, at most IMPORT_MAX_BYTES. */
export const ImportFileBytesSchema = z
  .instanceof(Uint8Array, { error: 'Send the file.' })
  .refine((b) => b.length > 0, 'The file is empty.')
  .refine((b) => b.length <= IMPORT_MAX_BYTES, IMPORT_TOO_LARGE);

export const ImportInputSchema = z.object({
  mode: z.enum(['dry-run', 'commit'], { error: 'mode is dry-run or commit.' }),
  /** Commit the valid rows and leave the rejected ones out (they come back as a CSV with their reasons). */
  validRowsOnly: z.boolean().default(false),
  csv: z
    .string({ error: 'Send the CSV file.' })
    .min(1, 'The file is empty: start from the template.')
    .max(IMPORT_MAX_BYTES, IMPORT_TOO_LARGE),
});
export type ImportInput = z.input<typeof ImportInputSchema>;

/**
 * A practice's own file (CSV or .xlsx, told by its content) with the choices of the mapping step
 * (lib/services/import-file.ts; anything left out is proposed: the saved mapping, else the
 * suggestions).
 */
export const ImportFileInputSchema = z.object({
  mode: z.enum(['dry-run', 'commit'], { error: 'mode is dry-run or commit.' }),
  validRowsOnly: z.boolean().default(false),
  file: ImportFileBytesSchema,
  options: ImportFileOptionsSchema.optional(),
});
export type ImportFileInput = z.input<typeof ImportFileInputSchema>;

export interface ImportProgress {
  /** check: reading and checking rows; insert: writing (commit only). */
  phase: 'check' | 'insert';
  done: number;
  total: number;
}

export interface ImportRowPreview {
  line: number;
  registryNumber: string;
  newPatient: boolean;
  /** In the practice's notation. */
  tooth: string;
  kind: CaseKind;
  kindLabel: string;
  completionDate: string;
  operatorEmail: string;
  /** Recall visits the case gets, and how many of them are already past due (created as missed). */
  visits: number;
  visitsMissed: number;
}

export interface ImportResult {
  mode: 'dry-run' | 'commit';
  /** True only for a commit that wrote every row. */
  committed: boolean;
  /** The rejected rows as CSV (the file's cells, then line and problems); null when none. */
  rejectedCsv: string | null;
  rows: ImportRowPreview[];
  /** Every bad row, by file line and column; nothing is written while there is one. */
  errors: CsvError[];
  summary: {
    rows: number;
    validRows: number;
    errorCount: number;
    newPatients: number;
    knownPatients: number;
    newReferrers: number;
    cases: number;
    visits: number;
    visitsMissed: number;
  };
  durationMs: number;
}

export interface ImportOptions {
  onProgress?: (p: ImportProgress) => void | Promise<void>;
  /** The practice's today (defaults to the clock in the practice's time zone); for tests. */
  today?: string;
}

const CHUNK = 1000;

/** The downloadable template: header and one invented example row. */
export function importTemplate(): { filename: string; body: string } {
  return { filename: 'lamina-cases-template.csv', body: templateCsv() };
}

/**
 * Imports past, completed cases from a CSV file (lib/registry/csv.ts has the columns).
 *
 * Dry run: reads every row and checks it against the practice — clinicians by e-mail, patients
 * by registry number, cases already in the registry — and returns the rows and every error by
 * line and column. Commit: the same checks, then, only when there is no error, one transaction
 * inserts the new patients (by registry number), referrers, cases and their recall plans
 * (visits whose window has already ended are created as missed, lib/recall). Batch inserts,
 * no per-row flush. A commit with errors writes nothing and answers like a dry run.
 */
export async function importCases(em: EntityManager, actor: Actor, raw: unknown, options: ImportOptions = {}): Promise<ImportResult> {
  assertCan(actor, 'case.import');
  const started = Date.now();
  const input = isFileInput(raw) ? parseInput(ImportFileInputSchema, raw) : parseInput(ImportInputSchema, raw);
  const settings = await practiceSettings(em, actor.practiceId);
  const today = options.today ?? todayIn(settings.timeZone);
  const progress = options.onProgress ?? (() => {});
  const knex = em.getKnex();

  const known = new Map<string, string>();
  for (const r of (await knex('patient').where('practice_id', actor.practiceId).select('id', 'registry_number')) as {
    id: string;
    registry_number: string;
  }[]) {
    known.set(r.registry_number, r.id);
  }
  await progress({ phase: 'check', done: 0, total: 0 });
  const parsed: ParseCasesResult & { records?: RejectableRecords } =
    'csv' in input ? parseCasesCsv(input.csv, { knownRegistryNumbers: known.keys() }) : await parseFile(em, actor, input, known.keys());
  const total = parsed.rows.length + new Set(parsed.errors.map((e) => e.line)).size;
  await progress({ phase: 'check', done: Math.round(total / 2), total });
  const errors: CsvError[] = [...parsed.errors];

  // Clinicians by e-mail.
  const emails = [...new Set(parsed.rows.map((r) => r.operatorEmail))];
  const clinicianByEmail = new Map<string, string>();
  for (let i = 0; i < emails.length; i += CHUNK) {
    const found = (await knex('app_user as u')
      .join('membership as m', 'm.user_id', 'u.id')
      .where({ 'm.practice_id': actor.practiceId, 'm.role': 'clinician' })
      .whereNull('m.revoked_at')
      .whereIn('u.email', emails.slice(i, i + CHUNK))
      .select('u.id', 'u.email')) as { id: string; email: string }[];
    for (const u of found) clinicianByEmail.set(u.email, u.id);
  }

  // Cases already in the registry (same patient, tooth, kind and start date).
  const knownRows = parsed.rows.filter((r) => known.has(r.registryNumber));
  const existingKeys = new Set<string>();
  const knownIds = [...new Set(knownRows.map((r) => known.get(r.registryNumber)!))];
  for (let i = 0; i < knownIds.length; i += CHUNK) {
    const found = (await knex('treatment_case')
      .where('practice_id', actor.practiceId)
      .whereIn('patient_id', knownIds.slice(i, i + CHUNK))
      .select('patient_id', 'tooth', 'kind', 'start_date')) as { patient_id: string; tooth: number; kind: string; start_date: string }[];
    for (const c of found) existingKeys.add(`${c.patient_id}|${c.tooth}|${c.kind}|${c.start_date}`);
  }

  const good: ValidRow[] = [];
  for (const row of parsed.rows) {
    let ok = true;
    if (!clinicianByEmail.has(row.operatorEmail)) {
      errors.push({ line: row.line, column: 'operator_email', reason: `${row.operatorEmail} is not a clinician of this practice.` });
      ok = false;
    }
    if (row.case.completionDate > today) {
      errors.push({ line: row.line, column: 'completion_date', reason: `The completion date ${row.case.completionDate} is in the future.` });
      ok = false;
    }
    const patientId = known.get(row.registryNumber);
    if (patientId && existingKeys.has(`${patientId}|${row.case.tooth}|${row.case.kind}|${row.case.startDate}`)) {
      errors.push({
        line: row.line,
        reason: `This case (patient ${row.registryNumber}, tooth ${row.case.tooth}, ${row.case.kind}, started ${row.case.startDate}) is already in the registry.`,
      });
      ok = false;
    }
    if (ok) good.push(row);
  }
  errors.sort((a, b) => a.line - b.line || (a.column ?? '').localeCompare(b.column ?? ''));
  await progress({ phase: 'check', done: total, total });

  const previews = good.map((row) => {
    const plan = planImportedVisits(row.case.completionDate, settings.recallPolicy, today);
    return {
      row,
      plan,
      preview: {
        line: row.line,
        registryNumber: row.registryNumber,
        newPatient: !known.has(row.registryNumber),
        tooth: formatTooth(row.case.tooth, settings.toothNotation),
        kind: row.case.kind,
        kindLabel: CASE_KIND_LABELS[row.case.kind],
        completionDate: row.case.completionDate,
        operatorEmail: row.operatorEmail,
        visits: plan.length,
        visitsMissed: plan.filter((v) => v.status === 'missed').length,
      } satisfies ImportRowPreview,
    };
  });

  // Referrers: matched by e-mail, else by name and practice; new ones created.
  const referrerByKey = new Map<string, string>();
  for (const r of (await knex('referrer').where('practice_id', actor.practiceId).whereNull('archived_at').select('id', 'name', 'practice_name', 'email')) as {
    id: string;
    name: string;
    practice_name: string | null;
    email: string | null;
  }[]) {
    const key = referrerKey({ name: r.name, practiceName: r.practice_name, email: r.email });
    if (!referrerByKey.has(key)) referrerByKey.set(key, r.id);
  }
  const newReferrers = new Map<string, { id: string; name: string; practiceName: string | null; email: string | null }>();
  for (const { row } of previews) {
    if (!row.referrer) continue;
    const key = referrerKey(row.referrer);
    if (referrerByKey.has(key) || newReferrers.has(key)) continue;
    newReferrers.set(key, { id: randomUUID(), name: row.referrer.name, practiceName: row.referrer.practiceName ?? null, email: row.referrer.email ?? null });
  }
  const newPatientNumbers = new Set(previews.filter((p) => p.preview.newPatient).map((p) => p.row.registryNumber));
  const summary = {
    rows: total,
    validRows: good.length,
    errorCount: errors.length,
    newPatients: newPatientNumbers.size,
    knownPatients: new Set(previews.filter((p) => !p.preview.newPatient).map((p) => p.row.registryNumber)).size,
    newReferrers: newReferrers.size,
    cases: good.length,
    visits: previews.reduce((n, p) => n + p.preview.visits, 0),
    visitsMissed: previews.reduce((n, p) => n + p.preview.visitsMissed, 0),
  };
  const result = (committed: boolean): ImportResult => ({
    mode: input.mode,
    committed,
    rows: previews.map((p) => p.preview),
    errors,
    rejectedCsv: errors.length ? rejectedRecordsCsv(parsed.records ?? csvRecords('csv' in input ? input.csv : ''), errors) : null,
    summary,
    durationMs: Date.now() - started,
  });

  if (input.mode === 'dry-run' || (errors.length > 0 && !input.validRowsOnly) || good.length === 0) {
    await audit(em, actor, {
      action: 'case.import_checked',
      entityType: 'case',
      detail: { mode: input.mode, rows: total, errors: errors.length, lines: [...new Set(errors.map((e) => e.line))].slice(0, 50) },
    });
    return result(false);
  }

  // Commit: one transaction, batch inserts.
  const now = new Date();
  const insertTotal = newPatientNumbers.size + newReferrers.size + good.length + summary.visits;
  let inserted = 0;
  const step = async (n: number) => {
    inserted += n;
    await progress({ phase: 'insert', done: inserted, total: insertTotal });
  };
  const patientIds = new Map(known);
  const patientRows: Record<string, unknown>[] = [];
  for (const { row } of previews) {
    if (!newPatientNumbers.has(row.registryNumber) || patientIds.has(row.registryNumber)) continue;
    const p = row.patient!;
    const id = randomUUID();
    patientIds.set(row.registryNumber, id);
    patientRows.push({
      id,
      practice: actor.practiceId,
      ...patientColumns({ ...p, registryNumber: row.registryNumber }),
      consentRecordedBy: actor.userId,
      createdAt: now,
      updatedAt: now,
    });
  }
  const referrerRows = [...newReferrers.values()].map((r) => ({ ...r, practice: actor.practiceId, createdAt: now }));
  for (const [key, r] of newReferrers) referrerByKey.set(key, r.id);
  const caseRows: Record<string, unknown>[] = [];
  const visitRows: Record<string, unknown>[] = [];
  for (const { row, plan } of previews) {
    const id = randomUUID();
    caseRows.push({
      id,
      practice: actor.practiceId,
      ...caseColumns({
        ...row.case,
        patientId: patientIds.get(row.registryNumber)!,
        operatorId: clinicianByEmail.get(row.operatorEmail)!,
        referrerId: row.referrer ? referrerByKey.get(referrerKey(row.referrer)) : undefined,
      }),
      ...visitSummary(plan),
      source: 'import',
      createdBy: actor.userId,
      createdAt: now,
      updatedAt: now,
    });
    for (const v of plan) {
      visitRows.push({
        id: randomUUID(),
        practice: actor.practiceId,
        case: id,
        milestone: v.milestone,
        dueDate: v.dueDate,
        windowStart: v.windowStart,
        windowEnd: v.windowEnd,
        status: v.status,
        reinviteNeeded: false,
        lostToFollowUp: false,
        statusChangedAt: now,
        createdAt: now,
        updatedAt: now,
      });
    }
  }
  try {
    await em.transactional(async (tx) => {
      const insert = async (entity: { meta: { className: string } }, rows: Record<string, unknown>[], size: number) => {
        for (let i = 0; i < rows.length; i += size) {
          const chunk = rows.slice(i, i + size);
          await bulkInsert(tx, entity, chunk, size);
          await step(chunk.length);
        }
      };
      await insert(PatientSchema, patientRows, CHUNK);
      await insert(ReferrerSchema, referrerRows, CHUNK);
      await insert(TreatmentCaseSchema, caseRows, CHUNK);
      await insert(RecallVisitSchema, visitRows, CHUNK * 3);
    });
  } catch (e) {
    if (e instanceof UniqueConstraintViolationException) {
      throw new ConflictError('Another import or entry added the same patient meanwhile: nothing was imported. Run the dry run again.');
    }
    throw e;
  }
  await audit(em, actor, {
    action: errors.length ? 'case.imported_valid_rows' : 'case.imported',
    entityType: 'case',
    detail: {
      rows: total,
      cases: good.length,
      newPatients: patientRows.length,
      newReferrers: referrerRows.length,
      visits: visitRows.length,
      ...(errors.length ? { rejectedRows: new Set(errors.map((e) => e.line)).size } : {}),
    },
  });
  return result(true);
}

/** A file's rows by line, under its header, for the rejected-rows CSV. */
interface RejectableRecords {
  header: string[];
  rows: Map<number, string[]>;
}

const rejectedRecordsCsv = (records: RejectableRecords, errors: readonly CsvError[]) => rejectedRowsCsv(records.header, (line) => records.rows.get(line), errors);

function csvRecords(text: string): RejectableRecords {
  const { header, rows } = readRecords(text, []);
  return { header: header ?? [], rows: new Map(rows.map((r) => [r.line, r.cells])) };
}

/**
 * The rejected rows of either import as CSV (the one CSV writer): the file line, the row's cells
 * under `header` (`cellsOf(line)`, blank when unknown), and every problem ("column: reason", joined by " | ").
 */
export function rejectedRowsCsv(header: readonly string[], cellsOf: (line: number) => readonly string[] | undefined, errors: readonly CsvError[]): string {
  const reasons = new Map<number, string[]>();
  for (const e of errors) reasons.set(e.line, [...(reasons.get(e.line) ?? []), e.column ? `${e.column}: ${e.reason}` : e.reason]);
  const rows = [...reasons.keys()]
    .sort((a, b) => a - b)
    .map((line) => {
      const cells = cellsOf(line);
      return [line, ...header.map((_, i) => cells?.[i] ?? ''), reasons.get(line)!.join(' | ')];
    });
  return writeCsv(['line', ...header, 'problems'], rows);
}

/** A practice's own file (multipart `file`), not a CSV in the template's form. */
export function isFileInput(raw: unknown): raw is { file: unknown } {
  return typeof raw === 'object' && raw !== null && 'file' in raw;
}

/**
 * A practice's own file: read, mapped and normalised (lib/import), then checked by the template's
 * rules. A row with a cell that could not be normalised is not valid; its rule errors on the same
 * cell are left out (one reason per cell). Errors name the file's own headers.
 */
async function parseFile(
  em: EntityManager,
  actor: Actor,
  input: z.infer<typeof ImportFileInputSchema>,
  knownRegistryNumbers: Iterable<string>,
): Promise<ParseCasesResult & { records: RejectableRecords }> {
  const { canonical, headerOf } = await resolveImportFile(em, actor, CASE_TEMPLATE, input.file, input.options);
  const parsed = parseCaseRecords(
    canonical.keys,
    canonical.rows.map((r) => ({ line: r.line, cells: canonical.keys.map((k) => r.values[k] ?? '') })),
    { knownRegistryNumbers },
  );
  const problemLines = new Set(canonical.problems.map((p) => p.line));
  const problemCells = new Set(canonical.problems.map((p) => `${p.line}|${p.column ?? ''}`));
  const named = (column: string | undefined) => (column === undefined ? {} : { column: headerOf.get(column) ?? column });
  const errors: CsvError[] = [
    ...canonical.problems.map((p) => ({ line: p.line, ...named(p.column), ...(p.value ? { value: p.value } : {}), reason: p.reason })),
    ...parsed.errors.filter((e) => !problemCells.has(`${e.line}|${e.column ?? ''}`)).map((e) => ({ ...e, ...named(e.column) })),
  ];
  errors.sort((a, b) => a.line - b.line);
  const records = { header: canonical.keys, rows: new Map(canonical.rows.map((r) => [r.line, canonical.keys.map((k) => r.values[k] ?? '')])) };
  return { rows: parsed.rows.filter((r) => !problemLines.has(r.line)), errors, records };
}

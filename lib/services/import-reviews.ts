import 'server-only';
import { randomUUID } from 'node:crypto';
import { z } from 'zod';
import type { EntityManager } from '@mikro-orm/postgresql';
import { ContactLogEntrySchema, ReviewSchema } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import type { CsvError } from '@/lib/registry/csv';
import { parseReviewRows, readReviewCsv, REVIEW_COLUMN_KEYS, REVIEW_TEMPLATE, reviewTemplateCsv, type CanonicalRecord } from '@/lib/registry/review-csv';
import { attachReviews, type ImportCaseInfo } from '@/lib/registry/review-import';
import { OUTCOME_LABELS, SCORING_CAUTION, type ReviewOutcome } from '@/lib/scoring';
import { formatTooth } from '@/lib/teeth';
import { audit } from './audit';
import { IMPORT_MAX_BYTES, IMPORT_TOO_LARGE, ImportFileBytesSchema, isFileInput, rejectedRowsCsv, type ImportProgress } from './import';
import { ImportFileOptionsSchema, resolveImportFile } from './import-file';
import { ConflictError } from './errors';
import { parseInput } from './parse';
import { bulkInsert, knexOf, practiceSettings, todayIn } from './registry-common';

export const ReviewImportInputSchema = z.object({
  mode: z.enum(['dry-run', 'commit'], { error: 'mode is dry-run or commit.' }),
  csv: z
    .string({ error: 'Send the CSV file.' })
    .min(1, 'The file is empty: start from the review template.')
    .max(IMPORT_MAX_BYTES, IMPORT_TOO_LARGE),
  /** Commit the valid rows and leave the rejected ones out (they come back as a CSV with their reasons). */
  validRowsOnly: z.boolean().default(false),
  /** Let the recall scan remind visits already due (their follow-up was outside Lamina until now). */
  remindOverdue: z.boolean().default(false),
});
export type ReviewImportInput = z.input<typeof ReviewImportInputSchema>;

/**
 * A practice's own file (CSV or .xlsx, told by its content) with the mapping step's choices
 * (lib/services/import-file.ts; anything left out is proposed: the saved mapping, else suggestions).
 */
export const ReviewImportFileInputSchema = ReviewImportInputSchema.omit({ csv: true }).extend({
  file: ImportFileBytesSchema,
  options: ImportFileOptionsSchema.optional(),
});
export type ReviewImportFileInput = z.input<typeof ReviewImportFileInputSchema>;

export interface ReviewImportRowPreview {
  line: number;
  caseId: string;
  patient: string;
  tooth: string;
  reviewDate: string;
  outcome: ReviewOutcome;
  outcomeLabel: string;
  /** Milestone of the visit the review is recorded at (attended), or null (unplanned). */
  visitMilestone: number | null;
}

export interface ReviewImportResult {
  mode: 'dry-run' | 'commit';
  committed: boolean;
  /** Valid rows (the first 1,000 in the answer). */
  rows: ReviewImportRowPreview[];
  errors: CsvError[];
  /** Rows whose case already has a review that day: skipped, never doubled. */
  duplicates: { line: number; reviewDate: string; caseId: string }[];
  /** The rejected rows as CSV (the file's cells, then line and problems); null when none. */
  rejectedCsv: string | null;
  summary: {
    rows: number;
    validRows: number;
    rejectedRows: number;
    errorCount: number;
    duplicates: number;
    reviews: number;
    cases: number;
    visitsAttended: number;
    visitsMissed: number;
    visitsCancelled: number;
    /** Open visits already due that get no automatic reminder. */
    visitsQuiet: number;
    outcomes: Partial<Record<ReviewOutcome, number>>;
  };
  caution: string;
  durationMs: number;
}

export interface ReviewImportOptions {
  onProgress?: (p: ImportProgress) => void | Promise<void>;
  today?: string;
}

const CHUNK = 1000;

export function reviewImportTemplate(): { filename: string; body: string } {
  return { filename: 'lamina-reviews-template.csv', body: reviewTemplateCsv() };
}

/**
 * Imports past reviews (issue 16) from a CSV in the review template's form (lib/registry/review-csv.ts).
 * Dry run: every row checked against the practice (lib/registry/review-import.ts attaches it to its
 * case, computes its outcome and works out the visits). Commit: only when every row is valid — or,
 * with `validRowsOnly`, the valid ones — in one transaction: the reviews, the visits' status
 * changes with their contact log, the visits kept out of automatic reminders. Duplicates of a
 * recorded review (same case and date) are reported and skipped.
 */
export async function importReviews(em: EntityManager, actor: Actor, raw: unknown, options: ReviewImportOptions = {}): Promise<ReviewImportResult> {
  assertCan(actor, 'case.import');
  if (isFileInput(raw)) {
    const input = parseInput(ReviewImportFileInputSchema, raw);
    const { canonical, headerOf, table } = await resolveImportFile(em, actor, REVIEW_TEMPLATE, input.file, input.options);
    const problems: CsvError[] = canonical.problems.map((p) => ({ line: p.line, ...(p.column ? { column: p.column } : {}), reason: p.reason }));
    const keys = new Set(canonical.keys);
    if (!keys.has('case_ref') && !(keys.has('registry_number') && keys.has('tooth_fdi'))) {
      problems.push({ line: table.headerLine, column: 'registry_number', reason: 'Map the columns that name the case: registry number and tooth, or the case reference.' });
    }
    // A row with a cell that could not be read is rejected with that reason alone.
    const badLines = new Set(problems.map((p) => p.line));
    const records = canonical.rows.filter((r) => !badLines.has(r.line)).map((r) => ({ line: r.line, cells: r.values }));
    const all = canonical.rows.map((r) => ({ line: r.line, cells: r.values }));
    return importReviewRecords(em, actor, { ...input, records, allRecords: all, readErrors: problems, headerOf }, options);
  }
  const input = parseInput(ReviewImportInputSchema, raw);
  const { records, errors } = readReviewCsv(input.csv);
  return importReviewRecords(em, actor, { ...input, records, readErrors: errors }, options);
}

/** The import from canonical records (what the reading layer makes of a CSV or .xlsx file). */
export async function importReviewRecords(
  em: EntityManager,
  actor: Actor,
  input: {
    mode: 'dry-run' | 'commit';
    validRowsOnly: boolean;
    remindOverdue: boolean;
    records: CanonicalRecord[];
    /** Every row of the file (for the rejected CSV), when `records` leaves some out. */
    allRecords?: CanonicalRecord[];
    readErrors: CsvError[];
    /** Template key → the file's own header: problems name the file's columns. */
    headerOf?: ReadonlyMap<string, string>;
  },
  options: ReviewImportOptions = {},
): Promise<ReviewImportResult> {
  assertCan(actor, 'case.import');
  const started = Date.now();
  const settings = await practiceSettings(em, actor.practiceId);
  const today = options.today ?? todayIn(settings.timeZone);
  const progress = options.onProgress ?? (() => {});
  const knex = knexOf(em);
  const total = (input.allRecords ?? input.records).length;
  await progress({ phase: 'check', done: 0, total });

  const parsed = parseReviewRows(input.records);
  await progress({ phase: 'check', done: Math.round(total / 3), total });

  // Clinicians by e-mail; the practice's cases with their current reviews and visits.
  const assessors = new Map<string, string>();
  for (const u of (await knex('app_user as u')
    .join('membership as m', 'm.user_id', 'u.id')
    .where({ 'm.practice_id': actor.practiceId, 'm.role': 'clinician' })
    .whereNull('m.revoked_at')
    .select('u.id', 'u.email')) as { id: string; email: string }[]) {
    assessors.set(u.email.toLowerCase(), u.id);
  }
  const cases = await readCases(em, actor.practiceId);
  await progress({ phase: 'check', done: Math.round((2 * total) / 3), total });
  const attached = attachReviews(parsed.rows, cases, { today, minObservationDays: settings.minObservationDays, assessors, remindOverdue: input.remindOverdue });
  const named = (e: CsvError): CsvError => (e.column && input.headerOf?.has(e.column) ? { ...e, column: input.headerOf.get(e.column)! } : e);
  const errors = [...input.readErrors, ...parsed.errors, ...attached.errors].map(named).sort((a, b) => a.line - b.line);
  await progress({ phase: 'check', done: total, total });

  const caseById = new Map(cases.map((c) => [c.id, c]));
  const milestoneOf = new Map<string, number>();
  for (const c of cases) for (const v of c.visits) milestoneOf.set(v.id, v.milestone);
  const rejectedLines = new Set(errors.map((e) => e.line));
  const outcomes: Partial<Record<ReviewOutcome, number>> = {};
  for (const a of attached.accepted) outcomes[a.assessment.outcome] = (outcomes[a.assessment.outcome] ?? 0) + 1;
  const count = (to: string) => attached.visitChanges.filter((v) => v.changes.status === to).length;
  const summary: ReviewImportResult['summary'] = {
    rows: total,
    validRows: attached.accepted.length,
    rejectedRows: rejectedLines.size,
    errorCount: errors.length,
    duplicates: attached.duplicates.length,
    reviews: attached.accepted.length,
    cases: new Set(attached.accepted.map((a) => a.caseId)).size,
    visitsAttended: count('attended'),
    visitsMissed: count('missed'),
    visitsCancelled: count('cancelled'),
    visitsQuiet: attached.quietVisits.length,
    outcomes,
  };
  const writes = errors.length === 0 || input.validRowsOnly;
  const result = (committed: boolean): ReviewImportResult => ({
    mode: input.mode,
    committed,
    rows: attached.accepted.slice(0, 1000).map((a) => {
      const c = caseById.get(a.caseId)!;
      return {
        line: a.line,
        caseId: a.caseId,
        patient: c.registryNumber,
        tooth: formatTooth(c.tooth, settings.toothNotation),
        reviewDate: a.review.reviewDate,
        outcome: a.assessment.outcome,
        outcomeLabel: OUTCOME_LABELS[a.assessment.outcome],
        visitMilestone: a.visitId ? (milestoneOf.get(a.visitId) ?? null) : null,
      };
    }),
    errors,
    duplicates: attached.duplicates,
    rejectedCsv: rejectedLines.size ? rejectedCsv(input.allRecords ?? input.records, errors) : null,
    summary,
    caution: SCORING_CAUTION,
    durationMs: Date.now() - started,
  });

  if (input.mode === 'dry-run' || !writes || attached.accepted.length === 0) {
    await audit(em, actor, {
      action: 'review.import_checked',
      entityType: 'review',
      detail: { mode: input.mode, rows: total, errors: errors.length, duplicates: attached.duplicates.length, lines: [...rejectedLines].slice(0, 50) },
    });
    return result(false);
  }

  const now = new Date();
  const reviewRows = attached.accepted.map((a) => ({
    id: randomUUID(),
    practice: actor.practiceId,
    case: a.caseId,
    visit: a.visitId,
    assessor: a.assessorId,
    reviewDate: a.review.reviewDate,
    daysSinceCompletion: a.assessment.daysSinceTreatment,
    toothStatus: a.review.toothStatus,
    paiScore: a.review.paiScore ?? null,
    lesionDiameterMm: a.review.lesionDiameterMm ?? null,
    signs: a.signs,
    otherFindings: a.review.otherFindings ?? null,
    eventDate: a.review.eventDate ?? null,
    extractionReason: a.review.extractionReason ?? null,
    outcome: a.assessment.outcome,
    successStrict: a.assessment.successStrict,
    successLenient: a.assessment.successLenient,
    outcomeReasons: a.assessment.reasons,
    createdAt: now,
    updatedAt: now,
  }));
  const logRows = attached.visitChanges.map((v) => ({
    id: randomUUID(),
    practice: actor.practiceId,
    visit: v.visitId,
    at: now,
    kind: 'status_change',
    by: 'user',
    user: actor.userId,
    fromStatus: v.from,
    toStatus: v.changes.status,
    note: v.note,
  }));
  const insertTotal = reviewRows.length + attached.visitChanges.length + attached.quietVisits.length;
  let done = 0;
  const step = async (n: number) => {
    done += n;
    await progress({ phase: 'insert', done, total: insertTotal });
  };
  await em.transactional(async (tx) => {
    const db = knexOf(tx);
    // One review import per practice at a time; a review recorded since the check (same case and
    // date) stops this one rather than doubling it.
    await db.raw(`select pg_advisory_xact_lock(hashtext('lamina-review-import'), hashtext(?))`, [actor.practiceId]);
    const keys = JSON.stringify(reviewRows.map((r) => ({ c: r.case, d: r.reviewDate })));
    const clash = (await db.raw(
      `select 1 from review r join json_to_recordset(?::json) as x(c uuid, d date) on r.case_id = x.c and r.review_date = x.d where r.superseded_by_id is null limit 1`,
      [keys],
    )) as { rows: unknown[] };
    if (clash.rows.length) throw new ConflictError('Reviews of these cases were recorded meanwhile: nothing was imported. Run the check again.');
    // Visits first: a review names the visit it attended.
    for (let i = 0; i < attached.visitChanges.length; i += CHUNK * 2) {
      const chunk = attached.visitChanges.slice(i, i + CHUNK * 2);
      const json = JSON.stringify(
        chunk.map((v) => ({ id: v.visitId, from: v.from, status: v.changes.status, missed_reason: v.changes.missedReason, missed_on: v.changes.missedOn, missed_from: v.changes.missedFrom })),
      );
      const updated = (await db.raw(
        `update recall_visit v set status = x.status, missed_reason = x.missed_reason, missed_on = x.missed_on, missed_from = x.missed_from,
           reinvite_needed = false, status_changed_at = ?, status_changed_by_id = ?, updated_at = ?
         from json_to_recordset(?::json) as x(id uuid, "from" text, status text, missed_reason text, missed_on date, missed_from text)
         where v.id = x.id and v.practice_id = ? and v.status = x."from"`,
        [now, actor.userId, now, json, actor.practiceId],
      )) as { rowCount: number };
      // A visit whose status changed since the check (the desk, the scan) stops the import.
      if (updated.rowCount !== chunk.length) throw new ConflictError('Some recall visits changed meanwhile: nothing was imported. Run the check again.');
      await step(chunk.length);
    }
    await bulkInsert(tx, ContactLogEntrySchema, logRows, CHUNK * 2);
    for (let i = 0; i < attached.quietVisits.length; i += CHUNK * 5) {
      const chunk = attached.quietVisits.slice(i, i + CHUNK * 5);
      await db('recall_visit').where('practice_id', actor.practiceId).whereIn('id', chunk).update({ auto_reminders: false, updated_at: now });
      await step(chunk.length);
    }
    for (let i = 0; i < reviewRows.length; i += CHUNK) {
      const chunk = reviewRows.slice(i, i + CHUNK);
      await bulkInsert(tx, ReviewSchema, chunk, CHUNK);
      await step(chunk.length);
    }
  });
  await audit(em, actor, {
    action: 'review.imported',
    entityType: 'review',
    detail: {
      rows: total,
      reviews: reviewRows.length,
      cases: summary.cases,
      rejectedRows: summary.rejectedRows,
      duplicates: summary.duplicates,
      visitsAttended: summary.visitsAttended,
      visitsMissed: summary.visitsMissed,
      visitsCancelled: summary.visitsCancelled,
      visitsQuiet: summary.visitsQuiet,
      remindOverdue: input.remindOverdue,
    },
  });
  return result(true);
}

/** The rejected rows: their cells as read (template columns), the file line, and every problem. */
export function rejectedCsv(records: readonly CanonicalRecord[], errors: readonly CsvError[]): string {
  const byLine = new Map(records.map((r) => [r.line, r]));
  return rejectedRowsCsv(REVIEW_COLUMN_KEYS, (line) => {
    const r = byLine.get(line);
    return r ? REVIEW_COLUMN_KEYS.map((k) => r.cells[k] ?? '') : undefined;
  }, errors);
}

interface CaseRow {
  id: string;
  registry_number: string;
  tooth: number;
  completion_date: string | null;
  pai_score: number;
  archived: boolean;
  reviews: { d: string; e: string | null }[];
  visits: {
    id: string;
    m: number;
    due: string;
    ws: string;
    we: string;
    s: ImportCaseInfo['visits'][number]['status'];
    b: string | null;
    mr: ImportCaseInfo['visits'][number]['missedReason'];
    mo: string | null;
    mf: ImportCaseInfo['visits'][number]['missedFrom'];
  }[];
}

/** Every case of the practice with its patient's registry number, current reviews and visits: one query. */
async function readCases(em: EntityManager, practiceId: string): Promise<ImportCaseInfo[]> {
  const knex = knexOf(em);
  const rows = (await knex
    .select(
      'c.id',
      'p.registry_number',
      'c.tooth',
      knex.raw('c.completion_date::text as completion_date'),
      'c.pai_score',
      knex.raw('(c.archived_at is not null or p.archived_at is not null) as archived'),
      knex.raw(
        `coalesce((select json_agg(json_build_object('d', r.review_date::text, 'e', r.event_date::text)) from review r where r.case_id = c.id and r.superseded_by_id is null), '[]'::json) as reviews`,
      ),
      knex.raw(
        `coalesce((select json_agg(json_build_object('id', v.id, 'm', v.milestone, 'due', v.due_date::text, 'ws', v.window_start::text, 'we', v.window_end::text, 's', v.status, 'b', v.booked_date::text, 'mr', v.missed_reason, 'mo', v.missed_on::text, 'mf', v.missed_from) order by v.milestone) from recall_visit v where v.case_id = c.id), '[]'::json) as visits`,
      ),
    )
    .from('treatment_case as c')
    .join('patient as p', 'p.id', 'c.patient_id')
    .where('c.practice_id', practiceId)) as CaseRow[];
  return rows.map((r) => ({
    id: r.id,
    registryNumber: r.registry_number,
    tooth: Number(r.tooth),
    completionDate: r.completion_date,
    baselinePai: Number(r.pai_score),
    archived: r.archived,
    reviews: r.reviews.map((x) => ({ reviewDate: x.d, eventDate: x.e })),
    visits: r.visits.map((v) => ({
      id: v.id,
      milestone: v.m,
      dueDate: v.due,
      windowStart: v.ws,
      windowEnd: v.we,
      status: v.s,
      bookedDate: v.b,
      missedReason: v.mr,
      missedOn: v.mo,
      missedFrom: v.mf,
    })),
  }));
}

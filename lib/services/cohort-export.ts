import 'server-only';
import { randomBytes } from 'node:crypto';
import { PassThrough } from 'node:stream';
import type { EntityManager, Knex } from '@mikro-orm/postgresql';
import type { CohortArchiveInput, CohortExportSummary, CohortRow, WriteCohortArchive } from '@/lib/cohorts/types';
import { openCursor } from '@/lib/db-read';
import { env } from '@/lib/env';
import { cohortPredicate } from '@/lib/outcomes/cohort-filter';
import { QUEUES, openCohortExportsQueue, producerFor, type CohortExportsQueue } from '@/lib/queue';
import type { CohortFilters } from '@/lib/schemas/cohort';
import { deleteObjects, headObject, uploadStream } from '@/lib/storage/s3';
import { audit } from './audit';
import { isServiceUnavailable } from './unavailable';
import { clinicianCodes, filtersText as filtersInWords } from './cohorts';
import { outcomeCaseColumns, outcomeCaseOf, type CaseRow } from './outcomes';
import { knexOf, practiceSettings, todayIn } from './registry-common';

/**
 * The research export's I/O (issue 14), run by jobs/cohort-export.ts: claim the export row, read
 * the saved version's rows from PostgreSQL through a cursor, a page at a time (never the whole practice in memory;
 * consenting patients only; no name, e-mail, phone, note or registry number is selected), hand them
 * to the pure archive writer (lib/cohorts) streaming into object storage under the export's own
 * key, write progress to the row, stop when cancelled, and finish with the figures and an audit event.
 */

/**
 * Rows per page of the reader (memory is a page, not the practice). Small on purpose: a page must
 * be handled before V8's next young-generation collections, or its rows (with their reviews) are
 * promoted to the old generation as they wait and pile up there as garbage until a full collection,
 * which V8 puts off longer the larger the export (pages of 1,000 made the worker's peak grow from
 * 322 MB at 10k cases to 480 MB at 100k; see DEVELOPERS.md, research cohorts).
 */
export const COHORT_PAGE_SIZE = 200;

/** The export's object key: one per export, so a retry replaces the file it left and never adds one. */
export function cohortObjectKey(practiceId: string, cohortId: string, exportId: string): string {
  return `practices/${practiceId}/cohorts/${cohortId}/exports/${exportId}.zip`;
}

/** The web process's producer (lib/queue's producerFor; fail-fast, like the desk's "send now"). */
export function cohortExportsProducer(): Promise<CohortExportsQueue> {
  const prefix = process.env.QUEUE_PREFIX;
  return producerFor(QUEUES.cohortExports, {
    url: env.REDIS_URL,
    name: 'web-cohorts',
    open: (c) => openCohortExportsQueue(c, { failFast: true, ...(prefix ? { prefix } : {}) }),
  });
}

interface RowWithPatient extends CaseRow {
  date_of_birth: string;
  sex: string;
  postal_code: string | null;
}

/** A reader that stops taking rows for this long loses its cursor (PostgreSQL ends the idle transaction that holds it). */
const COHORT_READ_IDLE_TIMEOUT = '5min';

/** The one query of a practice's consenting, completed cases with the SQL-side filters, in (completion date, id) order. */
function rowsQuery(knex: Knex, practiceId: string, f: CohortFilters): Knex.QueryBuilder {
  const q = knex
    .select(...outcomeCaseColumns(knex), knex.raw('p.date_of_birth::text as date_of_birth'), 'p.sex', 'p.postal_code')
    .from('treatment_case as c')
    .join('patient as p', 'p.id', 'c.patient_id')
    .where('c.practice_id', practiceId)
    .where('p.research_use', true)
    .whereNull('c.archived_at')
    .whereNull('p.archived_at')
    .whereNotNull('c.completion_date');
  if (f.from) q.where('c.completion_date', '>=', f.from);
  if (f.to) q.where('c.completion_date', '<=', f.to);
  if (f.kind) q.where('c.kind', f.kind);
  if (f.clinicians?.length) q.whereIn('c.operator_id', f.clinicians);
  return q.orderBy([{ column: 'c.completion_date' }, { column: 'c.id' }]);
}

/**
 * The version's rows in (completion date, id) order: ONE query read through a cursor in a read-only
 * transaction, `pageSize` rows fetched at a time (memory is a page, not the practice; a parameter
 * only so a test can cross page boundaries on a few rows). One query, not a keyset query per page:
 * each of those planned and joined afresh, about 0.3 s a page at 100,000 cases (npm run bench --
 * cohort). The transaction is closed when the last row is read or the reader stops (return()).
 */
export async function* cohortRows(em: EntityManager, practiceId: string, f: CohortFilters, pageSize = COHORT_PAGE_SIZE): AsyncGenerator<CohortRow> {
  const keep = cohortPredicate(f);
  const cursor = await openCursor<RowWithPatient | undefined>(knexOf(em), rowsQuery(knexOf(em), practiceId, f).toSQL(), {
    name: 'cohort_rows',
    fetchRows: pageSize,
    idleTimeout: COHORT_READ_IDLE_TIMEOUT,
    settings: 'set local jit = off',
  });
  try {
    for await (const page of cursor.pages) {
      for (let i = 0; i < page.length; i++) {
        const r = page[i]!;
        page[i] = undefined; // a row handed on is no longer held by the page (the consumer may keep it waiting)
        const c = outcomeCaseOf(r);
        if (!keep(c)) continue;
        yield { case: c, patient: { dateOfBirth: r.date_of_birth, sex: r.sex, postalCode: r.postal_code }, practiceId };
      }
    }
  } finally {
    await cursor.close();
  }
}

export interface ExportContext {
  em: () => EntityManager;
  write: WriteCohortArchive;
  /** tells the requester the archive is ready (once); the worker sends the e-mail */
  notify?: (n: { to: string; cohortName: string; version: number; exportId: string; practiceId: string }) => Promise<void>;
  log?: (m: string) => void;
  /** how often progress (and a cancellation) is written / read, ms */
  progressEveryMs?: number;
}

export type ExportOutcome = 'done' | 'cancelled' | 'skipped';

/** What the page shows for an attempt that failed because storage or the database did not answer (never a driver's message). */
export const EXPORT_UNAVAILABLE_MESSAGE = 'The file store or the database did not answer (it may be restarting).';

/** A failed attempt in words for the row (and the page): an outage in plain words, anything else by its message. */
export function exportErrorWords(e: unknown): string {
  if (isServiceUnavailable(e)) return EXPORT_UNAVAILABLE_MESSAGE;
  return (e as Error)?.message?.slice(0, 400) || 'The export failed.';
}

class Cancelled extends Error {
  constructor() {
    super('cancelled');
  }
}

/**
 * Makes one export. Claims the row (queued or running → running, attempts + 1); a cancelled or
 * finished export is skipped. Throws on failure so the queue retries (the same key is written
 * again); `final` marks the row failed instead.
 */
export async function runCohortExport(ctx: ExportContext, exportId: string, opts: { signal?: AbortSignal; final?: boolean } = {}): Promise<ExportOutcome> {
  const em = ctx.em();
  const knex = knexOf(em);
  const claimed = (await knex('cohort_export')
    .where({ id: exportId })
    .whereIn('status', ['queued', 'running'])
    .whereNull('cancel_requested_at')
    .update({ status: 'running', started_at: knex.raw('coalesce(started_at, now())'), attempts: knex.raw('attempts + 1'), error: null, progress_done: 0 })
    .returning(['id', 'practice_id', 'version_id', 'object_key', 'requested_by_id'])) as { id: string; practice_id: string; version_id: string; object_key: string; requested_by_id: string }[];
  const row = claimed[0];
  if (!row) {
    // a cancelled export whose job still ran: make sure no file of it is left
    const r = (await knex('cohort_export').where({ id: exportId }).first('status', 'object_key', 'cancel_requested_at')) as { status: string; object_key: string; cancel_requested_at: Date | null } | undefined;
    if (r && r.cancel_requested_at && r.status !== 'done') {
      await deleteObjects([r.object_key]);
      await knex('cohort_export').where({ id: exportId }).whereIn('status', ['queued', 'running']).update({ status: 'cancelled', finished_at: new Date() });
    }
    return 'skipped';
  }
  const version = (await knex('cohort_version as v')
    .join('cohort as c', 'c.id', 'v.cohort_id')
    .where('v.id', row.version_id)
    .first('v.number', 'v.filters', 'v.variables', 'v.k', 'c.name', 'c.id as cohort_id')) as { number: number; filters: CohortFilters; variables: string[]; k: number; name: string; cohort_id: string };
  const settings = await practiceSettings(em, row.practice_id);
  const filtersText = filtersInWords(version.filters, await clinicianCodes(em, row.practice_id));

  const controller = new AbortController();
  const onOuter = () => controller.abort(opts.signal?.reason);
  opts.signal?.addEventListener('abort', onOuter, { once: true });
  let cancelled = false;
  let lastWrite = 0;
  const every = ctx.progressEveryMs ?? 500;
  const checkpoint = async (done: number, total: number, force = false) => {
    const now = Date.now();
    if (!force && now - lastWrite < every) return;
    lastWrite = now;
    const r = (await knex('cohort_export').where({ id: exportId }).update({ progress_done: done, progress_total: total }).returning(['cancel_requested_at'])) as { cancel_requested_at: Date | null }[];
    if (r[0]?.cancel_requested_at) {
      cancelled = true;
      controller.abort(new Cancelled());
    }
  };

  try {
    // the count pass (one page in memory at a time)
    let total = 0;
    for await (const _ of cohortRows(em, row.practice_id, version.filters)) {
      total += 1;
      if (controller.signal.aborted) throw controller.signal.reason ?? new Cancelled();
    }
    await checkpoint(0, total * 2, true);
    if (controller.signal.aborted) throw new Cancelled();

    const input: CohortArchiveInput = {
      rows: () => cohortRows(em, row.practice_id, version.filters),
      total,
      variables: version.variables,
      k: version.k,
      // the pseudonyms' key: random per attempt, never stored or logged
      secret: randomBytes(32),
      minObservationDays: settings.minObservationDays,
      today: todayIn(settings.timeZone),
      cohort: { name: version.name, version: version.number, filtersText },
      onProgress: (p) => checkpoint(p.done, p.total),
      signal: controller.signal,
    };
    const out = new PassThrough();
    const uploading = uploadStream(row.object_key, out, 'application/zip', controller.signal);
    // The store failing mid-upload stops the writer at once, with the store's error as the reason:
    // otherwise the writer learns of it only as its output being torn down ("The operation was
    // aborted"), and the row would record that instead of the outage.
    uploading.catch((e: unknown) => {
      if (!controller.signal.aborted) controller.abort(e);
      out.destroy(e as Error);
    });
    let summary: CohortExportSummary;
    try {
      summary = await ctx.write(input, out);
      if (!out.writableEnded) out.end();
    } catch (e) {
      out.destroy(e as Error);
      await uploading.catch(() => undefined);
      throw e;
    }
    await uploading;
    if (controller.signal.aborted) throw controller.signal.reason ?? new Cancelled();
    const head = await headObject(row.object_key);
    const finished = await knex('cohort_export')
      .where({ id: exportId, status: 'running' })
      .whereNull('cancel_requested_at')
      .update({
        status: 'done',
        progress_done: summary.cases * 2 > 0 ? total * 2 : 0,
        progress_total: total * 2,
        cases: summary.cases,
        patients: summary.patients,
        reviews: summary.reviews,
        generalised: summary.generalised,
        suppressed: summary.suppressed,
        min_l: summary.minL,
        files: JSON.stringify(summary.files),
        byte_size: head?.size ?? null,
        finished_at: new Date(),
      });
    if (!finished) throw new Cancelled();
    const requester = (await knex('app_user').where({ id: row.requested_by_id }).first('id', 'email', 'name')) as { id: string; email: string; name: string | null };
    await audit(
      em,
      { userId: requester.id, email: requester.email, name: requester.name, practiceId: row.practice_id, practiceName: '', roles: ['researcher'], ip: null, userAgent: null },
      {
        action: 'cohort.exported',
        entityType: 'cohort_export',
        entityId: exportId,
        detail: { cohort: version.cohort_id, version: version.number, cases: summary.cases, patients: summary.patients, reviews: summary.reviews, generalised: summary.generalised, suppressed: summary.suppressed, k: summary.k, minL: summary.minL },
      },
    );
    // the notice goes once, whoever finishes (a compare-and-set on notified_at)
    const notify = await knex('cohort_export').where({ id: exportId }).whereNull('notified_at').update({ notified_at: new Date() });
    if (notify && ctx.notify) {
      await ctx.notify({ to: requester.email, cohortName: version.name, version: version.number, exportId, practiceId: row.practice_id }).catch((e: unknown) => {
        ctx.log?.(`[cohort-export] ${exportId}: the notice could not be sent: ${(e as Error).message}`);
      });
    }
    return 'done';
  } catch (e) {
    const isCancel = cancelled || e instanceof Cancelled || controller.signal.reason instanceof Cancelled;
    if (isCancel) {
      await deleteObjects([row.object_key]).catch(() => undefined);
      await knex('cohort_export').where({ id: exportId }).update({ status: 'cancelled', finished_at: new Date() });
      return 'cancelled';
    }
    // a worker shutting down: leave the row running for the retry; otherwise record the failure
    // the upload's own error is the reason when the store failed first (the writer then throws "aborted")
    const message = isServiceUnavailable(controller.signal.reason) ? EXPORT_UNAVAILABLE_MESSAGE : exportErrorWords(e);
    if (opts.final) {
      await deleteObjects([row.object_key]).catch(() => undefined);
      await knex('cohort_export').where({ id: exportId }).update({ status: 'failed', error: message, finished_at: new Date() });
      await audit(em, null, { action: 'cohort.export_failed', entityType: 'cohort_export', entityId: exportId, detail: { version: version.number } }, { practiceId: row.practice_id });
    } else {
      await knex('cohort_export').where({ id: exportId }).update({ status: 'queued', error: message });
    }
    throw e;
  } finally {
    opts.signal?.removeEventListener('abort', onOuter);
  }
}

import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { CohortExportStatus } from '@/lib/registry/cohort-status';
import { SWEEP_GRACE_MS, planSweep, practiceOfKey, type SweepExportRow, type SweepFilmRow, type SweepObject, type SweepPlan } from '@/lib/storage/orphans';
import { deleteObjects, listObjects } from '@/lib/storage/s3';
import { audit } from './audit';
import { knexOf } from './registry-common';

/**
 * The storage sweep (issue 15, faults): objects with no row and rows whose objects never arrived,
 * older than a grace period, are removed (the selection is pure, lib/storage/orphans.ts). Run by
 * the worker's `storage-sweep` job (hourly, like the recall scan) and by
 * `npm run storage-sweep` (scripts/storage-sweep.ts).
 *
 * Order: the bucket is listed first, the rows read after, so a row committed during the listing
 * is seen; anything younger than the cutoff is left alone, so an upload in flight (objects written,
 * row not yet) is never touched. A film row is deleted only while it still has no reading (checked
 * again in the DELETE). A store that errors stops the sweep before anything is removed: a failed
 * listing is never taken for an empty one. Each practice where something was removed (or refused)
 * gets one audit event `storage.swept` with counts only; the log line has counts only too — no
 * key, film, case or patient id.
 */

export interface SweepOptions {
  now?: Date;
  graceMs?: number;
  /** remove even above the safety share (lib/storage/orphans.ts) */
  force?: boolean;
  /** list and plan, remove nothing */
  dryRun?: boolean;
  log?: (message: string) => void;
}

export interface SweepSummary {
  practices: number;
  objectsRemoved: number;
  filmRowsRemoved: number;
  exportsMarkedFailed: number;
  /** objects with no row yet, younger than the grace period: in flight, kept */
  youngObjects: number;
  unknownObjects: number;
  readFilmsMissingObjects: number;
  /** practices where the safety share held removals back */
  refusedPractices: number;
  dryRun: boolean;
}

/** The prefix every key Lamina writes starts with (films and exports). */
const ROOT = 'practices/';

/** The error a done export gets when its archive is missing (the page adds "Start it again."). */
export const MISSING_ARCHIVE_MESSAGE = 'The archive was not found in storage.';

export async function sweepStorage(em: EntityManager, options: SweepOptions = {}): Promise<SweepSummary> {
  const now = options.now ?? new Date();
  const cutoff = new Date(now.getTime() - (options.graceMs ?? SWEEP_GRACE_MS));
  const knex = knexOf(em);

  // 1. the listing, grouped by practice (keys Lamina does not write are counted, never removed)
  const byPractice = new Map<string, SweepObject[]>();
  let strangers = 0;
  for await (const page of listObjects(ROOT)) {
    for (const o of page) {
      const p = practiceOfKey(o.key);
      if (!p) {
        strangers += 1;
        continue;
      }
      let list = byPractice.get(p);
      if (!list) byPractice.set(p, (list = []));
      list.push(o);
    }
  }
  // 2. the rows, after the listing
  const withRows = (await knex
    .select('practice_id')
    .from('film')
    .union((q) => q.select('practice_id').from('cohort_export'))) as { practice_id: string }[];
  const practices = [...new Set([...byPractice.keys(), ...withRows.map((r) => r.practice_id)])].sort();

  const summary: SweepSummary = {
    practices: practices.length,
    objectsRemoved: 0,
    filmRowsRemoved: 0,
    exportsMarkedFailed: 0,
    youngObjects: 0,
    unknownObjects: strangers,
    readFilmsMissingObjects: 0,
    refusedPractices: 0,
    dryRun: options.dryRun === true,
  };
  for (const practiceId of practices) {
    const plan = planSweep({ objects: byPractice.get(practiceId) ?? [], ...(await rowsOf(em, practiceId)), cutoff, force: options.force });
    summary.youngObjects += plan.counts.youngObjects;
    summary.unknownObjects += plan.counts.unknownObjects;
    summary.readFilmsMissingObjects += plan.counts.readFilmsMissingObjects;
    if (plan.refused.objects || plan.refused.rows) summary.refusedPractices += 1;
    if (options.dryRun) {
      summary.objectsRemoved += plan.deleteObjects.length + plan.deleteFilms.reduce((n, f) => n + f.leftovers.length, 0);
      summary.filmRowsRemoved += plan.deleteFilms.length;
      summary.exportsMarkedFailed += plan.failExports.length;
      continue;
    }
    const done = await apply(em, plan, cutoff);
    summary.objectsRemoved += done.objects;
    summary.filmRowsRemoved += done.films;
    summary.exportsMarkedFailed += done.exports;
    if (done.objects || done.films || done.exports || plan.refused.objects || plan.refused.rows) {
      await audit(
        em,
        null,
        {
          action: 'storage.swept',
          detail: { objectsRemoved: done.objects, filmRowsRemoved: done.films, exportsMarkedFailed: done.exports, graceMinutes: Math.round((now.getTime() - cutoff.getTime()) / 60_000), ...(plan.refused.objects ? { refusedObjects: true } : {}), ...(plan.refused.rows ? { refusedRows: true } : {}) },
        },
        { practiceId },
      );
    }
  }
  options.log?.(
    `[storage-sweep] ${summary.dryRun ? 'would remove' : 'removed'} ${summary.objectsRemoved} object(s), ${summary.filmRowsRemoved} film row(s), ` +
      `${summary.exportsMarkedFailed} export(s) marked failed; kept ${summary.youngObjects} in flight, ${summary.unknownObjects} unknown, ` +
      `${summary.readFilmsMissingObjects} read film(s) missing objects; ${summary.refusedPractices} practice(s) refused; ${summary.practices} practice(s)`,
  );
  return summary;
}

async function rowsOf(em: EntityManager, practiceId: string): Promise<{ films: SweepFilmRow[]; exports: SweepExportRow[] }> {
  const knex = knexOf(em);
  const films = (await knex('film as f')
    .where('f.practice_id', practiceId)
    .select(
      'f.id',
      'f.original_key',
      'f.web_key',
      'f.thumbnail_key',
      'f.created_at',
      knex.raw('(exists (select 1 from film_reading r where r.film_id = f.id) or exists (select 1 from reference_film x where x.film_id = f.id)) as read'),
    )) as { id: string; original_key: string; web_key: string; thumbnail_key: string; created_at: Date | string; read: boolean }[];
  const exports = (await knex('cohort_export').where({ practice_id: practiceId }).select('id', 'status', 'object_key', 'created_at', 'finished_at')) as {
    id: string;
    status: CohortExportStatus;
    object_key: string;
    created_at: Date | string;
    finished_at: Date | string | null;
  }[];
  return {
    films: films.map((f) => ({ id: f.id, keys: [f.original_key, f.web_key, f.thumbnail_key], createdAt: new Date(f.created_at), read: f.read === true })),
    exports: exports.map((e) => ({ id: e.id, status: e.status, objectKey: e.object_key, at: new Date(e.finished_at ?? e.created_at) })),
  };
}

/** Applies one practice's plan: rows first (each re-checked in SQL), then objects. */
async function apply(em: EntityManager, plan: SweepPlan, cutoff: Date): Promise<{ objects: number; films: number; exports: number }> {
  const knex = knexOf(em);
  let removed: string[] = [];
  if (plan.deleteFilms.length) {
    const rows = (await knex('film as f')
      .whereIn('f.id', plan.deleteFilms.map((f) => f.id))
      .where('f.created_at', '<', cutoff)
      .whereNotExists((q) => q.select(knex.raw('1')).from('film_reading as r').whereRaw('r.film_id = f.id'))
      .whereNotExists((q) => q.select(knex.raw('1')).from('reference_film as x').whereRaw('x.film_id = f.id'))
      .delete()
      .returning('f.id')) as { id: string }[];
    removed = rows.map((r) => r.id);
  }
  let exports = 0;
  if (plan.failExports.length) {
    exports = await knex('cohort_export').whereIn('id', plan.failExports).where({ status: 'done' }).update({ status: 'failed', error: MISSING_ARCHIVE_MESSAGE });
  }
  // the objects with no row, and what is left of the film rows just removed (not of one read meanwhile)
  const gone = new Set(removed);
  const keys = [...plan.deleteObjects, ...plan.deleteFilms.filter((f) => gone.has(f.id)).flatMap((f) => f.leftovers)];
  // one request per key (lib/storage/s3.ts); in slices so a large backlog does not open thousands at once
  for (let i = 0; i < keys.length; i += 50) await deleteObjects(keys.slice(i, i + 50));
  return { objects: keys.length, films: removed.length, exports };
}

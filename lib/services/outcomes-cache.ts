import 'server-only';
import { createHash } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { OutcomeCase } from '@/lib/outcomes';
import { swapRows } from '@/lib/outcomes/swap';
import { knexOf } from './registry-common';
import { readKnex } from '@/lib/db-read';
import { logger } from '@/lib/log/logger';
import { keepRecent, keptRecently } from '@/lib/kept-recently';

/**
 * The outcomes area's rows, kept per practice between requests (issue 12, performance).
 *
 * Reading 100,000 cases with their reviews takes seconds; every outcomes view needs all of them.
 * So each web instance keeps the last rows it read per practice together with the practice's
 * **data version** (table outcomes_data_version), which database triggers bump in the same
 * transaction as every statement that changes the practice's cases, reviews, recall visits or
 * patients (migrations/Migration20261202180000.ts). A request reads the version (one primary-key
 * lookup) and reuses the rows when it is unchanged. Correct with several web instances: each
 * checks the database's version, none trusts its own.
 *
 * **Incremental refresh** (Migration20261202230000): the triggers also write which cases (or
 * patients) each version changed (table outcomes_data_change). When the version moved on, the
 * cache reads the changes between its version and the new one and, when every version in between
 * is there, none says "everything" (a bulk statement, a TRUNCATE) and at most MAX_CHANGED cases
 * and patients changed, re-reads only those cases (`OutcomeReader.some`: the same query, limited
 * to the cases and the patients' cases) and swaps them into a copy of the rows (unchanged case
 * objects are kept, with what lib/outcomes memoised on them; removed ones dropped; the order of
 * the full read kept). Otherwise it reads everything again.
 *
 * The version is read BEFORE the changes and the rows: a change committed in between gives rows
 * newer than their version, which only costs a second re-read of those cases next time (never
 * rows older than their version). Requests that find the same stale version share one read. The
 * rows (and what lib/outcomes memoises on them) are never changed after the read. At most
 * MAX_PRACTICES practices are kept (the least recently used goes).
 *
 * With a read replica (DATABASE_READ_URL) the version and the changes are read there too, like the
 * rows (full or some): a version from the primary with rows from a lagging replica would keep stale
 * rows under a new version.
 *
 * **Bounded lag under a burst of writes** (issue 15, load): every write moves the version on, and
 * each move makes every view be computed again on all the practice's cases (a few hundred ms each
 * at 100,000 cases). During a burst (reviews saved every second) that work would hold up every
 * other request. So a caller may pass `maxLagMs`: rows read less than `maxLagMs` ago are still
 * served after the version moved on (marked `behind`, with the time they were read), and the warmer
 * advances them in the background just before they are that old (dueForWarming). The rows, and so
 * the figures, then lag the database by at most `maxLagMs`; with 0 (the default, and what the cohort counts use) they are always current.
 * After a quiet spell the rows are older than `maxLagMs`, so the first write is seen at once.
 */
const MAX_PRACTICES = 4;
/** More changed cases and patients than this since the cached version: read everything again. */
export const MAX_CHANGED = 2000;

/** How the rows are read: every completed case of a practice, or those among some cases and the cases of some patients (lib/services/outcomes.ts). */
export interface OutcomeReader {
  all: (em: EntityManager, practiceId: string) => Promise<OutcomeCase[]>;
  some: (em: EntityManager, practiceId: string, caseIds: readonly string[], patientIds: readonly string[]) => Promise<OutcomeCase[]>;
}

interface Entry {
  version: string;
  rows: OutcomeCase[];
  /** when the version of these rows was read (Date.now()): they hold every change made before */
  readAt: number;
}

/** What the rows a request gets describe: the database as it was at `at` (ISO time); `behind` when it has changed since, by at most `maxLagMs`. */
export interface DataAsOf {
  at: string;
  behind: boolean;
  maxLagMs: number;
}
const cache = new Map<string, Entry>();
const reading = new Map<string, Promise<Entry>>();

/** How the last refresh went (the benchmark and the tests read it). */
export interface RefreshInfo {
  practiceId: string;
  from: string | null;
  to: string;
  kind: 'full' | 'partial';
  /** why a full read: 'empty' (nothing cached), 'gap' (a version's changes missing), 'bulk', 'many' */
  reason?: 'empty' | 'gap' | 'bulk' | 'many';
  changedCases: number;
  changedPatients: number;
  ms: number;
}
let lastRefresh: RefreshInfo | null = null;
export const lastOutcomesRefresh = (): RefreshInfo | null => lastRefresh;

export async function outcomesDataVersion(em: EntityManager, practiceId: string): Promise<string> {
  const row = (await readKnex(em).select('version').from('outcomes_data_version').where({ practice_id: practiceId }).first()) as { version: string | number } | undefined;
  return String(row?.version ?? 0);
}

/**
 * The practice's rows and their data version, from the cache when the version is unchanged (or, with
 * `maxLagMs`, when the cached rows were read less than `maxLagMs` ago), else refreshed through `reader`.
 */
export async function cachedOutcomeCases(
  em: EntityManager,
  practiceId: string,
  reader: OutcomeReader,
  maxLagMs = 0,
): Promise<{ rows: OutcomeCase[]; version: string; asOf: DataAsOf }> {
  const readAt = Date.now();
  const version = await outcomesDataVersion(em, practiceId);
  const hit = cache.get(practiceId);
  if (hit && hit.version !== version && BigInt(hit.version) < BigInt(version) && readAt - hit.readAt < maxLagMs) {
    return { rows: hit.rows, version: hit.version, asOf: { at: new Date(hit.readAt).toISOString(), behind: true, maxLagMs } };
  }
  const e = await rowsAt(em, practiceId, version, reader, readAt);
  return { rows: e.rows, version: e.version, asOf: { at: new Date(readAt).toISOString(), behind: false, maxLagMs } };
}

/** The rows at `version` (read from the database at `readAt`). */
function rowsAt(em: EntityManager, practiceId: string, version: string, reader: OutcomeReader, readAt: number): Promise<Entry> | Entry {
  const hit = cache.get(practiceId);
  if (hit && hit.version === version) return keepRecent(cache, practiceId, hit, MAX_PRACTICES);
  const key = `${practiceId}@${version}`;
  let pending = reading.get(key);
  if (!pending) {
    pending = refresh(em, practiceId, hit ?? null, version, reader)
      .then((rows) => {
        const entry = { version, rows, readAt };
        const current = cache.get(practiceId);
        // a slower read of an older version never replaces a newer one
        if (!current || BigInt(current.version) <= BigInt(version)) keepRecent(cache, practiceId, entry, MAX_PRACTICES);
        return entry;
      })
      .finally(() => reading.delete(key));
    reading.set(key, pending);
  }
  return pending;
}

interface ChangeSummary {
  versions: string | number;
  bulk: string | number;
  cases: string[] | null;
  patients: string[] | null;
}

async function refresh(em: EntityManager, practiceId: string, old: Entry | null, version: string, reader: OutcomeReader): Promise<OutcomeCase[]> {
  const t0 = performance.now();
  const done = (rows: OutcomeCase[], info: Omit<RefreshInfo, 'practiceId' | 'from' | 'to' | 'ms'>) => {
    lastRefresh = { practiceId, from: old?.version ?? null, to: version, ms: performance.now() - t0, ...info };
    return rows;
  };
  const full = async (reason: RefreshInfo['reason']) => done(await reader.all(em, practiceId), { kind: 'full', reason, changedCases: 0, changedPatients: 0 });
  if (!old) return full('empty');
  if (BigInt(old.version) >= BigInt(version)) return full('gap');
  const from = BigInt(old.version);
  const summary = (
    await readKnex(em).raw(
      `select count(distinct version) as versions,
              count(*) filter (where case_id is null and patient_id is null) as bulk,
              array_agg(distinct case_id) filter (where case_id is not null) as cases,
              array_agg(distinct patient_id) filter (where patient_id is not null) as patients
         from outcomes_data_change where practice_id = ? and version > ? and version <= ?`,
      [practiceId, old.version, version],
    )
  ).rows[0] as ChangeSummary;
  if (BigInt(summary.versions) !== BigInt(version) - from) return full('gap');
  if (Number(summary.bulk) > 0) return full('bulk');
  const cases = summary.cases ?? [];
  const patients = summary.patients ?? [];
  if (cases.length + patients.length > MAX_CHANGED) return full('many');
  const fresh = await reader.some(em, practiceId, cases, patients);
  return done(swapRows(old.rows, fresh, cases, patients), { kind: 'partial', changedCases: cases.length, changedPatients: patients.length });
}

/**
 * A view's figures computed from the rows of one data version, kept for the next request that asks
 * the same (key: the view, the effective filter and options, today, the minimum observation time).
 * `compute` gets the rows and must depend on nothing else that is not in the key: the warmer
 * (warmOutcomes) runs it again on the rows of a newer version. The figures are plain data that
 * callers must not change (copy before renaming levels). At most MAX_VIEWS (128; a curves view is
 * about 200 KB) are kept, the least recently used going first; a new data version makes old keys
 * unreachable (and they age out).
 */
const MAX_VIEWS = 128;
const views = new Map<string, unknown>();
/** The most recently asked views per practice (key → how to compute it), for the warmer. */
const MAX_RECIPES = 32;
/** Views not asked for this long are not warmed. */
const RECENT_MS = 30 * 60 * 1000;
interface Recipe {
  compute: (rows: OutcomeCase[]) => unknown;
  at: number;
}
const recipes = new Map<string, Map<string, Recipe>>();

export function memoView<T>(practiceId: string, version: string, key: readonly unknown[], rows: OutcomeCase[], compute: (rows: OutcomeCase[]) => T): T {
  const id = JSON.stringify(key);
  let mine = recipes.get(practiceId);
  if (!mine) recipes.set(practiceId, (mine = new Map()));
  keepRecent(mine, id, { compute, at: Date.now() }, MAX_RECIPES);
  return keptRecently(views, `${practiceId}@${version}:${id}`, MAX_VIEWS, () => compute(rows)) as T;
}

/**
 * What the warmer does with new rows before it computes the views on them, in slices with yields
 * (outcomes-warm.ts: the facts laid out as columns, which the first view would otherwise build in
 * one piece, about a second at 100,000 cases, holding up every request of the instance).
 */
export type PrepareRows = (em: EntityManager, practiceId: string, rows: OutcomeCase[]) => Promise<void>;

/** Let the event loop answer waiting requests before the next piece of background work. */
export const yieldToRequests = (): Promise<void> => new Promise((r) => setImmediate(r));

/**
 * Bring a practice's cache up to the database's current version and compute again, on the new
 * rows, the views most recently asked (newest first), yielding to requests between views: run in
 * the background after a write (startOutcomesWarmer) and at start, so a user rarely meets a cold
 * read or a cold view. Returns how many views it computed.
 */
export async function warmOutcomes(em: EntityManager, practiceId: string, reader: OutcomeReader, prepare?: PrepareRows): Promise<number> {
  const t0 = performance.now();
  const readAt = Date.now();
  const version = await outcomesDataVersion(em, practiceId);
  const before = lastRefresh;
  const { rows } = await rowsAt(em, practiceId, version, reader, readAt);
  const refreshed = lastRefresh !== before ? lastRefresh : null;
  if (prepare) await prepare(em, practiceId, rows);
  const since = Date.now() - RECENT_MS;
  const mine = [...(recipes.get(practiceId) ?? new Map<string, Recipe>()).entries()].filter(([, r]) => r.at >= since).reverse();
  let computed = 0;
  let viewsMs = 0;
  let longestViewMs = 0;
  for (const [id, { compute }] of mine) {
    const k = `${practiceId}@${version}:${id}`;
    if (cache.get(practiceId)?.version !== version) break; // a newer version arrived: the next round warms it
    if (views.has(k)) continue;
    await yieldToRequests();
    if (views.has(k)) continue;
    const v0 = performance.now();
    keptRecently(views, k, MAX_VIEWS, () => compute(rows));
    const took = performance.now() - v0;
    viewsMs += took;
    longestViewMs = Math.max(longestViewMs, took);
    computed++;
  }
  // One line a round, ids and timings only: what the load bench counts inside its timed window (a
  // view is computed in one piece, holding up the instance's other requests for longestViewMs).
  logger('web').info(
    {
      practiceId,
      version,
      refresh: refreshed ? { kind: refreshed.kind, reason: refreshed.reason, changedCases: refreshed.changedCases, ms: Math.round(refreshed.ms) } : null,
      views: computed,
      viewsMs: Math.round(viewsMs),
      longestViewMs: Math.round(longestViewMs),
      ms: Math.round(performance.now() - t0),
    },
    'outcomes warmed',
  );
  return computed;
}

/** The practices whose rows this instance keeps, with their cached versions and when those were read. */
export const cachedPractices = (): { practiceId: string; version: string; readAt: number }[] =>
  [...cache.entries()].map(([practiceId, e]) => ({ practiceId, version: e.version, readAt: e.readAt }));

/**
 * The practices to warm now: those whose database version moved on from the cached one, and whose
 * rows are old enough that a request could soon stop accepting them: read at least `maxLagMs`
 * less two ticks (`everyMs`) ago, and at least half `maxLagMs` ago (the requests accept rows up to
 * `maxLagMs` old). So during a burst the rows advance about once per `maxLagMs`, in the background.
 */
export function dueForWarming(
  held: readonly { practiceId: string; version: string; readAt: number }[],
  versions: ReadonlyMap<string, string>,
  now: number,
  maxLagMs: number,
  everyMs: number,
): string[] {
  const age = Math.max(maxLagMs / 2, maxLagMs - 2 * everyMs);
  return held.filter((h) => versions.has(h.practiceId) && versions.get(h.practiceId) !== h.version && now - h.readAt >= age).map((h) => h.practiceId);
}

/**
 * Every `everyMs`, compare the cached practices' versions with the database's (one query) and warm
 * those that moved on (warmOutcomes), one round at a time; with `maxLagMs` (what the requests
 * accept, cachedOutcomeCases), only once their rows are nearly that old (dueForWarming), so that
 * during a burst of writes the rows and the recent views are computed again about once per
 * `maxLagMs` rather than after every write. The timer does not keep the process alive. Returns a
 * stop function.
 */
export function startOutcomesWarmer(
  getEm: () => Promise<EntityManager>,
  reader: OutcomeReader,
  everyMs: number,
  onError: (e: unknown) => void,
  maxLagMs = 0,
  prepare?: PrepareRows,
): () => void {
  let busy = false;
  const tick = async () => {
    if (busy) return;
    busy = true;
    try {
      const held = cachedPractices();
      if (!held.length) return;
      const em = await getEm();
      const now = (await knexOf(em).select('practice_id', 'version').from('outcomes_data_version').whereIn('practice_id', held.map((h) => h.practiceId))) as { practice_id: string; version: string | number }[];
      const versions = new Map(now.map((r) => [r.practice_id, String(r.version)]));
      for (const practiceId of dueForWarming(held, versions, Date.now(), maxLagMs, everyMs)) await warmOutcomes(await getEm(), practiceId, reader, prepare);
    } catch (e) {
      onError(e);
    } finally {
      busy = false;
    }
  };
  const timer = setInterval(() => void tick(), everyMs);
  timer.unref?.();
  return () => clearInterval(timer);
}

/**
 * Drawn documents (the printed report's PDF: seconds of drawing), kept like the views' figures: per
 * practice and data version under `key`, which must hold everything the document shows (the
 * report's key is its filters and the data it draws, the time it was drawn aside), so a repeat is
 * the same bytes. Requests for a key being drawn share the drawing. At most MAX_DOCUMENTS and
 * MAX_DOCUMENT_BYTES are kept, the least recently used going first; a new data version makes old
 * keys unreachable. `cached` says whether the bytes were kept ones. The bytes must not be changed.
 */
const MAX_DOCUMENTS = 64;
const MAX_DOCUMENT_BYTES = 48 * 1024 * 1024;
const documents = new Map<string, Buffer>();
const drawing = new Map<string, Promise<Buffer>>();
let documentBytes = 0;

export async function memoDocument(practiceId: string, version: string, key: readonly unknown[], draw: () => Promise<Buffer>): Promise<{ bytes: Buffer; cached: boolean }> {
  const k = `${practiceId}@${version}:${createHash('sha256').update(JSON.stringify(key)).digest('base64url')}`;
  const hit = documents.get(k);
  if (hit) {
    documents.delete(k);
    documents.set(k, hit);
    return { bytes: hit, cached: true };
  }
  let pending = drawing.get(k);
  const shared = Boolean(pending);
  if (!pending) {
    pending = draw()
      .then((bytes) => {
        const old = documents.get(k);
        if (old) documentBytes -= old.length;
        documents.set(k, bytes);
        documentBytes += bytes.length;
        while (documents.size > MAX_DOCUMENTS || documentBytes > MAX_DOCUMENT_BYTES) {
          const [oldest, b] = documents.entries().next().value!;
          documents.delete(oldest);
          documentBytes -= b.length;
        }
        return bytes;
      })
      .finally(() => drawing.delete(k));
    drawing.set(k, pending);
  }
  return { bytes: await pending, cached: shared };
}

/** How many views' figures are kept, over every practice (the start's warming is checked by it). */
export const keptViewCount = (): number => views.size;

/** Forget every cached practice, view and document (the benchmark's cold requests; tests). */
export function invalidateOutcomeCases(): void {
  cache.clear();
  views.clear();
  documents.clear();
  documentBytes = 0;
}

/** Forget the figures computed for every version but keep the rows (the benchmark: the first request of a filter). */
export function forgetOutcomeViews(): void {
  views.clear();
}

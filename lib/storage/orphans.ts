/**
 * The storage sweep's selection (issue 15, faults), pure: given what the object store lists and
 * what PostgreSQL holds for one practice, which objects have no row and which rows' objects never
 * arrived. No I/O; lib/services/storage-sweep.ts lists, reads, applies and audits.
 *
 * How orphans arise: a film's objects are written before its row (lib/services/films.ts) and
 * removed again when the row cannot be written — unless the store goes down in between, which
 * leaves objects with no row. A research export's object belongs to its `cohort_export` row; a
 * failed or cancelled export removes it, again unless the store is down. A row whose object is
 * missing is the other way round (the store lost it, or it never arrived).
 *
 * Rules (each only for things older than the cutoff, i.e. now − grace, so an upload or export in
 * flight — objects written, row not yet — is never touched):
 * - an object under a film's key whose film id has no row → removed;
 * - an object under an export's key whose row is missing, failed or cancelled → removed
 *   (queued and running exports are in flight; a done one keeps its file);
 * - a film row missing any of its three objects → the row and its remaining objects removed,
 *   unless it has been read (a reading or reference row: someone saw the film) — kept and counted;
 * - a done export whose object is missing → marked failed ("start it again").
 * - a key Lamina does not write is never removed (counted).
 * Safety: when more than `maxShare` of the practice's old objects or old rows (and more than
 * `minRefuse` of them) would go, that side is refused and reported instead — a wrong bucket, an
 * empty database or a listing cut short must not empty the other side. `force` overrides it.
 */
import type { CohortExportStatus } from '@/lib/registry/cohort-status';

/** Objects and rows younger than this are in flight and never swept (an upload takes seconds; an export minutes). */
export const SWEEP_GRACE_MS = 60 * 60 * 1000;
/** The share of a practice's old objects (or rows) above which the sweep refuses to remove them. */
export const SWEEP_MAX_SHARE = 0.5;
/** Below this many, removals are never refused (a handful of orphans after an outage is normal). */
export const SWEEP_MIN_REFUSE = 5;

const UUID = '[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}';
const FILM_KEY = new RegExp(`^practices/(${UUID})/cases/(${UUID})/films/(${UUID})/(original|web|thumbnail)\\.(png|jpg|dcm)$`);
const EXPORT_KEY = new RegExp(`^practices/(${UUID})/cohorts/(${UUID})/exports/(${UUID})\\.zip$`);

export type ObjectKeyKind =
  | { kind: 'film'; practiceId: string; filmId: string }
  | { kind: 'export'; practiceId: string; exportId: string }
  | { kind: 'unknown' };

/** What a key belongs to, by the shapes lib/services/films.ts and cohort-export.ts write. */
export function parseObjectKey(key: string): ObjectKeyKind {
  const f = FILM_KEY.exec(key);
  if (f) return { kind: 'film', practiceId: f[1]!, filmId: f[3]! };
  const e = EXPORT_KEY.exec(key);
  if (e) return { kind: 'export', practiceId: e[1]!, exportId: e[3]! };
  return { kind: 'unknown' };
}

/** The practice a key is under, or null for a key Lamina does not write. */
export function practiceOfKey(key: string): string | null {
  const k = parseObjectKey(key);
  return k.kind === 'unknown' ? null : k.practiceId;
}

export interface SweepObject {
  key: string;
  lastModified: Date;
}

export interface SweepFilmRow {
  id: string;
  /** original, web and thumbnail */
  keys: readonly string[];
  createdAt: Date;
  /** it has a reading or is a reference film: someone saw it, so its row is never removed */
  read: boolean;
}

export interface SweepExportRow {
  id: string;
  status: CohortExportStatus;
  objectKey: string;
  /** when it finished (done), else when it was made */
  at: Date;
}

export interface SweepInput {
  objects: readonly SweepObject[];
  films: readonly SweepFilmRow[];
  exports: readonly SweepExportRow[];
  /** only what is older than this is swept (now − grace) */
  cutoff: Date;
  maxShare?: number;
  minRefuse?: number;
  /** remove even above the safety share */
  force?: boolean;
}

export interface SweepPlan {
  /** objects with no row (or a row that keeps none) */
  deleteObjects: string[];
  /** film rows whose objects never arrived, with those of their objects that did (removed once the row is) */
  deleteFilms: { id: string; leftovers: string[] }[];
  /** done exports whose archive is missing: to be marked failed */
  failExports: string[];
  counts: {
    orphanObjects: number;
    /** objects younger than the cutoff with no row yet (in flight) */
    youngObjects: number;
    unknownObjects: number;
    /** film rows missing an object but read: kept */
    readFilmsMissingObjects: number;
  };
  /** which side was held back by the safety share */
  refused: { objects: boolean; rows: boolean };
}

/** EXPORT states that never keep a file. */
const FILELESS: readonly CohortExportStatus[] = ['failed', 'cancelled'];

export function planSweep(input: SweepInput): SweepPlan {
  const cutoff = input.cutoff.getTime();
  const maxShare = input.maxShare ?? SWEEP_MAX_SHARE;
  const minRefuse = input.minRefuse ?? SWEEP_MIN_REFUSE;
  const filmIds = new Set(input.films.map((f) => f.id));
  const exportsByKey = new Map(input.exports.map((e) => [e.objectKey, e]));
  const present = new Set(input.objects.map((o) => o.key));

  const orphans: string[] = [];
  let oldObjects = 0;
  let youngObjects = 0;
  let unknownObjects = 0;
  for (const o of input.objects) {
    const k = parseObjectKey(o.key);
    if (k.kind === 'unknown') {
      unknownObjects += 1;
      continue;
    }
    const orphan = k.kind === 'film' ? !filmIds.has(k.filmId) : !exportsByKey.has(o.key) || FILELESS.includes(exportsByKey.get(o.key)!.status);
    if (o.lastModified.getTime() >= cutoff) {
      if (orphan) youngObjects += 1;
      continue;
    }
    oldObjects += 1;
    if (orphan) orphans.push(o.key);
  }

  const deleteFilms: { id: string; leftovers: string[] }[] = [];
  let readFilmsMissingObjects = 0;
  let oldRows = 0;
  for (const f of input.films) {
    if (f.createdAt.getTime() >= cutoff) continue;
    oldRows += 1;
    if (f.keys.every((k) => present.has(k))) continue;
    if (f.read) {
      readFilmsMissingObjects += 1;
      continue;
    }
    deleteFilms.push({ id: f.id, leftovers: f.keys.filter((k) => present.has(k)) });
  }
  const failExports: string[] = [];
  for (const e of input.exports) {
    if (e.at.getTime() >= cutoff) continue;
    if (e.status !== 'done') continue;
    oldRows += 1;
    if (!present.has(e.objectKey)) failExports.push(e.id);
  }

  const tooMany = (n: number, of: number) => !input.force && n > minRefuse && n > maxShare * of;
  const refused = { objects: tooMany(orphans.length, oldObjects), rows: tooMany(deleteFilms.length + failExports.length, oldRows) };
  return {
    deleteObjects: refused.objects ? [] : orphans.sort(),
    deleteFilms: refused.rows ? [] : deleteFilms.sort((a, b) => (a.id < b.id ? -1 : 1)),
    failExports: refused.rows ? [] : failExports.sort(),
    counts: { orphanObjects: orphans.length, youngObjects, unknownObjects, readFilmsMissingObjects },
    refused,
  };
}

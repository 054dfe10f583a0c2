import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { OutcomeCase } from '@/lib/outcomes';
import { readKnex } from '@/lib/db-read';

/**
 * The outcomes area's rows, kept per practice between requests (issue 12, performance).
 *
 * Reading 100,000 cases with their reviews takes about a second or more; every outcomes view
 * needs all of them. So each web instance keeps the last rows it read per practice together with
 * the practice's **data version** (table outcomes_data_version), which database triggers bump in
 * the same transaction as every statement that changes the practice's cases, reviews, recall
 * visits or patients (migrations/Migration20261202180000.ts). A request reads the version (one
 * primary-key lookup) and reuses the rows when it is unchanged; otherwise it reads them again.
 * Correct with several web instances: each checks the database's version, none trusts its own.
 *
 * The version is read BEFORE the rows: a change committed in between gives rows newer than their
 * version, which only costs a re-read next time (never rows older than their version). Requests
 * that find the same stale version share one read. The rows (and what lib/outcomes memoises on
 * them) are never changed after the read. At most MAX_PRACTICES practices are kept (the least
 * recently used goes).
 *
 * With a read replica (DATABASE_READ_URL) the version is read there too, like the rows: a version
 * from the primary with rows from a lagging replica would keep stale rows under a new version.
 */
const MAX_PRACTICES = 4;

interface Entry {
  version: string;
  rows: OutcomeCase[];
}
const cache = new Map<string, Entry>();
const reading = new Map<string, Promise<Entry>>();

export async function outcomesDataVersion(em: EntityManager, practiceId: string): Promise<string> {
  const row = (await readKnex(em).select('version').from('outcomes_data_version').where({ practice_id: practiceId }).first()) as { version: string | number } | undefined;
  return String(row?.version ?? 0);
}

/** The practice's rows and their data version, from the cache when the version is unchanged, else from `read`. */
export async function cachedOutcomeCases(
  em: EntityManager,
  practiceId: string,
  read: (em: EntityManager, practiceId: string) => Promise<OutcomeCase[]>,
): Promise<{ rows: OutcomeCase[]; version: string }> {
  const version = await outcomesDataVersion(em, practiceId);
  const hit = cache.get(practiceId);
  if (hit && hit.version === version) {
    cache.delete(practiceId); // most recently used last
    cache.set(practiceId, hit);
    return hit;
  }
  const key = `${practiceId}@${version}`;
  let pending = reading.get(key);
  if (!pending) {
    pending = read(em, practiceId)
      .then((rows) => {
        const entry = { version, rows };
        const current = cache.get(practiceId);
        // a slower read of an older version never replaces a newer one
        if (!current || BigInt(current.version) <= BigInt(version)) {
          cache.delete(practiceId);
          cache.set(practiceId, entry);
          while (cache.size > MAX_PRACTICES) cache.delete(cache.keys().next().value!);
        }
        return entry;
      })
      .finally(() => reading.delete(key));
    reading.set(key, pending);
  }
  return pending;
}

/**
 * A view's figures computed from the rows of one data version, kept for the next request that asks
 * the same (key: the view, the effective filter and options, today, the minimum observation time).
 * The figures are plain data that callers must not change (copy before renaming levels). At most
 * MAX_VIEWS (128; a curves view is about 200 KB) are kept, the least recently used going first; a new data version makes old keys
 * unreachable (and they age out).
 */
const MAX_VIEWS = 128;
const views = new Map<string, unknown>();
export function memoView<T>(practiceId: string, version: string, key: readonly unknown[], compute: () => T): T {
  const k = `${practiceId}@${version}:${JSON.stringify(key)}`;
  if (views.has(k)) {
    const v = views.get(k) as T;
    views.delete(k);
    views.set(k, v);
    return v;
  }
  const v = compute();
  views.set(k, v);
  while (views.size > MAX_VIEWS) views.delete(views.keys().next().value!);
  return v;
}

/** Forget every cached practice and view (the benchmark's cold requests; tests). */
export function invalidateOutcomeCases(): void {
  cache.clear();
  views.clear();
}

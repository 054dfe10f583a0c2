/**
 * The case list's totals, kept per practice, filters and the practice's case-list version (issue 15,
 * load). The version (table case_list_version) is bumped by the database in the same transaction as
 * every statement that changes the practice's cases, recall visits or patients, so a total kept
 * under the version a request read is still exact: it is counted again only after a change, made by
 * whichever process. The page, its size and the sort do not change a total and are not part of the
 * key. Requests that ask at once share one count; a count that fails is not kept. At most `max`
 * totals are kept, the least recently used going first. Pure apart from its own map.
 */
import { keptRecently } from '@/lib/kept-recently';

export interface TotalsKeeper {
  /** The total of `filters` at `version`: kept, or counted now by `count` (the caller read `version` BEFORE counting). */
  total(practiceId: string, version: string, filters: Record<string, unknown>, count: () => Promise<number>): Promise<number>;
  size(): number;
}

/** What does not change a total: the page and the order. */
const NOT_FILTERS = new Set(['page', 'pageSize', 'sort', 'dir']);

export function makeTotalsKeeper(max: number): TotalsKeeper {
  const kept = new Map<string, Promise<number>>();
  return {
    total(practiceId, version, filters, count) {
      const only = Object.entries(filters).filter(([k, v]) => v !== undefined && !NOT_FILTERS.has(k));
      const key = JSON.stringify([practiceId, version, only.sort(([a], [b]) => (a < b ? -1 : 1))]);
      return keptRecently(kept, key, max, () => {
        const counting = count();
        counting.catch(() => {
          if (kept.get(key) === counting) kept.delete(key);
        });
        return counting;
      });
    },
    size: () => kept.size,
  };
}

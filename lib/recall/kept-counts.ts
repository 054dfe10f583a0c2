/**
 * Figures kept for a short while between requests (the recall desk's queue counts: one statement of
 * tens of ms of PostgreSQL at 100,000 cases, asked by every open desk on each visit of the page).
 *
 * A figure is kept under `key` within a `group` (the practice) for `maxAgeMs` from the moment its
 * computation STARTED, so it never shows a state older than that. `forget(group)` drops the group's
 * figures at once (a desk action made through this process), and a computation that started before
 * the last forget of its group is answered but not kept (it may not include the action). With
 * `maxAgeMs` 0 nothing is kept. At most `max` figures are kept, the least recently used going first.
 * Pure apart from its own map; the clock is passed in.
 */
import { keepRecent } from '@/lib/kept-recently';

export interface CountKeeper<T> {
  read(group: string, key: string, maxAgeMs: number, now: () => number, compute: () => Promise<T>): Promise<T>;
  forget(group: string, now: number): void;
  size(): number;
}

export function makeCountKeeper<T>(max: number): CountKeeper<T> {
  const kept = new Map<string, { group: string; at: number; value: T }>();
  const forgotten = new Map<string, number>();
  return {
    async read(group, key, maxAgeMs, now, compute) {
      const id = `${group}\u0000${key}`;
      const started = now();
      const hit = kept.get(id);
      if (hit && started - hit.at < maxAgeMs) return keepRecent(kept, id, hit, max).value;
      const value = await compute();
      if (maxAgeMs > 0 && started > (forgotten.get(group) ?? -Infinity)) keepRecent(kept, id, { group, at: started, value }, max);
      return value;
    },
    forget(group, now) {
      forgotten.set(group, now);
      for (const [id, v] of kept) if (v.group === group) kept.delete(id);
    },
    size: () => kept.size,
  };
}

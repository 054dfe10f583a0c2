/**
 * Figures kept for a short while between requests (the recall desk's queue counts: one statement of
 * tens of ms of PostgreSQL at 100,000 cases, asked by every open desk on each visit of the page).
 *
 * A figure is kept under `key` within a `group` (the practice) for `maxAgeMs` from the moment its
 * computation STARTED, so it never shows a state older than that. `forget(group)` drops the group's
 * figures at once (a desk action made through this process), and a computation that started before
 * the last forget of its group is answered but not kept (it may not include the action). With
 * `maxAgeMs` 0 nothing is kept. At most `max` figures are kept, the least recently used going first.
 * A read that finds no kept figure but one being counted (started after the group's last forget,
 * within `maxAgeMs`) waits for that count instead of starting another: when a kept figure ages out
 * under load, the desks asking meanwhile share one statement rather than each sending theirs.
 * Pure apart from its own maps; the clock is passed in.
 */
import { keepRecent } from '@/lib/kept-recently';

export interface CountKeeper<T> {
  read(group: string, key: string, maxAgeMs: number, now: () => number, compute: () => Promise<T>): Promise<T>;
  forget(group: string, now: number): void;
  size(): number;
}

export function makeCountKeeper<T>(max: number): CountKeeper<T> {
  const kept = new Map<string, { group: string; at: number; value: T }>();
  const counting = new Map<string, { at: number; value: Promise<T> }>();
  const forgotten = new Map<string, number>();
  const current = (group: string, at: number) => at > (forgotten.get(group) ?? -Infinity);
  return {
    async read(group, key, maxAgeMs, now, compute) {
      const id = `${group}\u0000${key}`;
      const started = now();
      const hit = kept.get(id);
      if (hit && started - hit.at < maxAgeMs) return keepRecent(kept, id, hit, max).value;
      const running = counting.get(id);
      if (running && started - running.at < maxAgeMs && current(group, running.at)) return running.value;
      const value = compute();
      if (maxAgeMs > 0) counting.set(id, { at: started, value });
      try {
        const v = await value;
        if (maxAgeMs > 0 && current(group, started)) keepRecent(kept, id, { group, at: started, value: v }, max);
        return v;
      } finally {
        if (counting.get(id)?.value === value) counting.delete(id);
      }
    },
    forget(group, now) {
      forgotten.set(group, now);
      for (const [id, v] of kept) if (v.group === group) kept.delete(id);
    },
    size: () => kept.size,
  };
}

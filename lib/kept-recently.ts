/**
 * Least-recently-used bookkeeping on a Map (a Map keeps insertion order: the first key is the least
 * recently used). One home for the in-process keepers: the outcomes rows, views and worklist orders
 * (lib/services/outcomes-cache.ts, outcomes-worklist.ts) and the desk's kept counts
 * (lib/recall/kept-counts.ts).
 */

/** Puts `value` at `key` as the most recently used entry; beyond `max` entries the least recently used go. */
export function keepRecent<K, V>(map: Map<K, V>, key: K, value: V, max: number): V {
  map.delete(key);
  map.set(key, value);
  while (map.size > max) map.delete(map.keys().next().value!);
  return value;
}

/** `map`'s value at `key`, made by `make` when there is none, now the most recently used entry (keepRecent). */
export function keptRecently<K, V>(map: Map<K, V>, key: K, max: number, make: () => V): V {
  return keepRecent(map, key, map.has(key) ? (map.get(key) as V) : make(), max);
}

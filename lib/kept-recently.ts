/**
 * Least-recently-used bookkeeping on a Map (a Map keeps insertion order: the first key is the least
 * recently used). One home for the in-process keepers: the outcomes rows, views and worklist orders
 * (lib/services/outcomes-cache.ts, outcomes-worklist.ts), the desk's kept counts
 * (lib/recall/kept-counts.ts) and the film store's small renditions (makeBytesKeeper, lib/storage/s3.ts).
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

/** A keeper of byte arrays bounded by their total size (makeBytesKeeper). */
export interface BytesKeeper {
  /** The bytes at `key`, now the most recently used; null when not kept. */
  get(key: string): Uint8Array | null;
  /** Keeps `bytes` at `key` (not when larger than the largest kept object); beyond the total the least recently used go. */
  put(key: string, bytes: Uint8Array): void;
  forget(key: string): void;
  readonly bytes: number;
  readonly size: number;
}

/** Least recently used byte arrays, at most `maxBytes` in all and `maxObjectBytes` each (the film store's small renditions, lib/storage/s3.ts). */
export function makeBytesKeeper(maxBytes: number, maxObjectBytes: number): BytesKeeper {
  const map = new Map<string, Uint8Array>();
  let total = 0;
  const forget = (key: string) => {
    const old = map.get(key);
    if (!old) return;
    map.delete(key);
    total -= old.byteLength;
  };
  return {
    get(key) {
      const v = map.get(key);
      if (!v) return null;
      map.delete(key);
      map.set(key, v);
      return v;
    },
    put(key, bytes) {
      forget(key);
      if (bytes.byteLength > maxObjectBytes || bytes.byteLength > maxBytes) return;
      map.set(key, bytes);
      total += bytes.byteLength;
      while (total > maxBytes) forget(map.keys().next().value!);
    },
    forget,
    get bytes() {
      return total;
    },
    get size() {
      return map.size;
    },
  };
}

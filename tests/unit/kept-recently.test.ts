import { describe, expect, it } from 'vitest';
import { keepRecent, keptRecently, makeBytesKeeper } from '@/lib/kept-recently';

/** lib/kept-recently.ts: the one least-recently-used bookkeeping of the in-process keepers. */
describe('kept recently', () => {
  it('keepRecent puts a value last and drops the least recently used beyond max', () => {
    const m = new Map([['a', 1], ['b', 2]]);
    keepRecent(m, 'a', 10, 2);
    expect([...m]).toEqual([['b', 2], ['a', 10]]);
    keepRecent(m, 'c', 3, 2);
    expect([...m]).toEqual([['a', 10], ['c', 3]]);
  });

  it('keptRecently makes a value once, and a kept one moves to most recently used', () => {
    const m = new Map<string, number>();
    let made = 0;
    const make = (v: number) => () => (made++, v);
    expect(keptRecently(m, 'a', 2, make(1))).toBe(1);
    expect(keptRecently(m, 'b', 2, make(2))).toBe(2);
    expect(keptRecently(m, 'a', 2, make(9))).toBe(1);
    expect(keptRecently(m, 'c', 2, make(3))).toBe(3);
    expect([...m.keys()]).toEqual(['a', 'c']);
    expect(made).toBe(3);
  });

  it('makeBytesKeeper keeps at most its total and its largest object, dropping the least recently used', () => {
    const k = makeBytesKeeper(10, 6);
    const b = (n: number, v = n) => new Uint8Array(n).fill(v);
    k.put('a', b(4));
    k.put('b', b(4));
    expect(k.get('a')).toEqual(b(4)); // a is now the most recently used
    k.put('c', b(4)); // 12 > 10: b goes
    expect([k.get('b'), k.bytes, k.size]).toEqual([null, 8, 2]);
    k.put('big', b(7)); // over the largest object: not kept, nothing dropped
    expect([k.get('big'), k.bytes]).toEqual([null, 8]);
    k.put('a', b(2, 9)); // the same key again replaces it
    expect([k.get('a'), k.bytes]).toEqual([b(2, 9), 6]);
    k.forget('c');
    k.forget('nothing');
    expect([k.get('c'), k.bytes, k.size]).toEqual([null, 2, 1]);
    const small = makeBytesKeeper(3, 6);
    small.put('x', b(4)); // larger than the whole total: not kept
    expect([small.get('x'), small.bytes]).toEqual([null, 0]);
  });
});

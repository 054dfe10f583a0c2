import { describe, expect, it } from 'vitest';
import { keepRecent, keptRecently } from '@/lib/kept-recently';

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
});

import { describe, expect, it } from 'vitest';
import { makeTotalsKeeper } from '@/lib/registry/kept-totals';

describe('the case list’s kept totals (lib/registry/kept-totals.ts)', () => {
  const counter = () => {
    let calls = 0;
    return { count: (n: number) => async () => (calls++, n), calls: () => calls };
  };

  it('counts once per practice, version and filters; the page and the order are not part of the key', async () => {
    const k = makeTotalsKeeper(10);
    const c = counter();
    expect(await k.total('p1', '7', { kind: ['apical_surgery'], page: 1, pageSize: 50, sort: 'tooth', dir: 'asc' }, c.count(12))).toBe(12);
    expect(await k.total('p1', '7', { dir: 'desc', page: 3, kind: ['apical_surgery'], q: undefined }, c.count(99))).toBe(12);
    expect(c.calls()).toBe(1);
    // another version, filter or practice is counted on its own
    expect(await k.total('p1', '8', { kind: ['apical_surgery'] }, c.count(13))).toBe(13);
    expect(await k.total('p1', '8', { kind: ['primary_treatment'] }, c.count(40))).toBe(40);
    expect(await k.total('p2', '8', { kind: ['apical_surgery'] }, c.count(2))).toBe(2);
    expect(c.calls()).toBe(4);
  });

  it('shares one count between requests that ask at once, and keeps no failed count', async () => {
    const k = makeTotalsKeeper(10);
    let release!: (n: number) => void;
    let calls = 0;
    const slow = () => (calls++, new Promise<number>((r) => (release = r)));
    const a = k.total('p1', '1', {}, slow);
    const b = k.total('p1', '1', {}, slow);
    release(5);
    expect([await a, await b, calls]).toEqual([5, 5, 1]);

    const failing = k.total('p1', '2', {}, async () => {
      throw new Error('database gone');
    });
    await expect(failing).rejects.toThrow('database gone');
    await Promise.resolve();
    expect(await k.total('p1', '2', {}, async () => 6)).toBe(6);
  });

  it('keeps at most `max` totals, the least recently used going first', async () => {
    const k = makeTotalsKeeper(2);
    const c = counter();
    await k.total('p1', '1', { kind: ['a'] }, c.count(1));
    await k.total('p1', '1', { kind: ['b'] }, c.count(2));
    await k.total('p1', '1', { kind: ['a'] }, c.count(1)); // used again: now the most recent
    await k.total('p1', '1', { kind: ['c'] }, c.count(3)); // pushes out b
    expect(k.size()).toBe(2);
    await k.total('p1', '1', { kind: ['a'] }, c.count(1));
    expect(c.calls()).toBe(3);
    await k.total('p1', '1', { kind: ['b'] }, c.count(2));
    expect(c.calls()).toBe(4);
  });
});

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { IN_PLACE_HIST_LENGTH, groupByTime, groupEqualRows, radixSort, radixSortInPlace } from '@/lib/stats/internal';
import { prng } from '@/tests/reference/datasets';

// The radix sort must order like the native numeric sort and be stable (common practice).
describe('radixSort', () => {
  it('matches the native sort on large inputs with ties, -0, tiny and huge values, and is stable', () => {
    const rnd = prng(7);
    const n = 50_000;
    const v = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const u = rnd();
      v[i] = u < 0.1 ? Math.floor(rnd() * 50) : u < 0.2 ? rnd() * 1e-300 : u < 0.25 ? -0 : u < 0.3 ? rnd() * 1e300 : Math.round(rnd() * 1e5) / 100;
    }
    const idx = Int32Array.from({ length: n }, (_, i) => i);
    const { keys, payload } = radixSort(v, idx);
    const native = Float64Array.from(v, (x) => x + 0).sort();
    expect(Array.from(keys)).toEqual(Array.from(native));
    for (let k = 1; k < n; k++) {
      if (keys[k] === keys[k - 1]) expect((payload as Int32Array)[k]).toBeGreaterThan((payload as Int32Array)[k - 1]);
      expect(v[(payload as Int32Array)[k]] + 0).toBe(keys[k]);
    }
  });
  it('small inputs (comparison path) agree too', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 1e6, noNaN: true }), { maxLength: 3000 }), (xs) => {
        const v = Float64Array.from(xs);
        const { keys } = radixSort(v, Int32Array.from(xs, (_, i) => i));
        expect(Array.from(keys)).toEqual(Array.from(Float64Array.from(xs, (x) => x + 0).sort()));
      }),
      { numRuns: 30 },
    );
  });
  it('groupByTime gives distinct times and their members', () => {
    const g = groupByTime(Float64Array.from([3, 1, 3, 2, 1]), Int32Array.from([0, 1, 2, 3, 4]));
    expect(Array.from(g.times)).toEqual([1, 2, 3]);
    expect(Array.from(g.start)).toEqual([0, 2, 3, 5]);
    expect(Array.from(g.payload)).toEqual([1, 4, 3, 0, 2]);
  });
});

describe('radixSort in place on a view', () => {
  it('sorts a subarray in place of its buffer without touching the rest', () => {
    const rnd = prng(9);
    const buf = Float64Array.from({ length: 10_000 }, () => Math.round(rnd() * 1e6) / 7);
    const before = buf.slice();
    const view = buf.subarray(3000, 9000);
    const expected = Float64Array.from(view).sort();
    const { keys } = radixSort(view, undefined, true);
    expect(Array.from(keys)).toEqual(Array.from(expected));
    expect(Array.from(buf.subarray(0, 3000))).toEqual(Array.from(before.subarray(0, 3000)));
    expect(Array.from(buf.subarray(9000))).toEqual(Array.from(before.subarray(9000)));
  });
});

describe('radixSortInPlace', () => {
  it('sorts views of one buffer in place with shared scratch and histograms, like the native sort', () => {
    const rnd = prng(11);
    const n = 30_000;
    const buf = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      const u = rnd();
      // ties, tiny and huge values, and a block whose high digits are all the same (skipped passes)
      buf[i] = u < 0.1 ? Math.floor(rnd() * 50) : u < 0.2 ? rnd() * 1e-300 : u < 0.3 ? rnd() * 1e300 : i < 10_000 ? 1 + i / 2 ** 40 : Math.round(rnd() * 1e5) / 100;
    }
    const before = buf.slice();
    const scratch = new Float64Array(20_000);
    const hist = new Int32Array(IN_PLACE_HIST_LENGTH);
    for (const [a, b] of [
      [0, 10_000],
      [10_000, 27_000],
      [27_000, 27_500],
    ]) {
      const expected = Float64Array.from(before.subarray(a, b)).sort();
      radixSortInPlace(buf.subarray(a, b), scratch, hist);
      expect(Array.from(buf.subarray(a, b))).toEqual(Array.from(expected));
    }
    expect(Array.from(buf.subarray(27_500))).toEqual(Array.from(before.subarray(27_500)));
    const same = new Float64Array(5000).fill(3.5);
    radixSortInPlace(same, scratch, hist);
    expect(same.every((x) => x === 3.5)).toBe(true);
    // powers of two differ only in the top digit: one pass, the result copied back from scratch
    const pow = Float64Array.from({ length: 5000 }, () => 2 ** Math.floor(rnd() * 8));
    const powSorted = pow.slice().sort();
    radixSortInPlace(pow, scratch, hist);
    expect(Array.from(pow)).toEqual(Array.from(powSorted));
  });

  it('puts in order keys that differ only in their low 32 bits, wherever the runs lie', () => {
    const rnd = prng(12);
    const scratch = new Float64Array(10_000);
    const hist = new Int32Array(IN_PLACE_HIST_LENGTH);
    // 1 + k * 2^-40 share one high word: a single run, given in reverse order
    const oneRun = Float64Array.from({ length: 5000 }, (_, i) => 1 + (5000 - i) / 2 ** 40);
    const oneRunSorted = oneRun.slice().sort();
    radixSortInPlace(oneRun, scratch, hist);
    expect(Array.from(oneRun)).toEqual(Array.from(oneRunSorted));
    // many short runs (at the start, the middle and the end of the order) among ordinary keys
    const mixed = Float64Array.from({ length: 8000 }, () => {
      const u = rnd();
      const base = [0.5, 7, 4000][Math.floor(rnd() * 3)];
      return u < 0.5 ? base + Math.floor(rnd() * 16) * base * 2 ** -45 : Math.round(rnd() * 4e5) / 100;
    });
    const mixedSorted = mixed.slice().sort();
    radixSortInPlace(mixed, scratch, hist);
    expect(Array.from(mixed)).toEqual(Array.from(mixedSorted));
  });
});

describe('groupEqualRows', () => {
  // checked against the obvious grouping: a Map keyed by the row's values (and label) as text
  const naive = (x: Float64Array, n: number, k: number, label?: Uint8Array) => {
    const ids = new Map<string, number>();
    return Array.from({ length: n }, (_, i) => {
      const key = `${label ? label[i] : ''}|${Array.from(x.subarray(i * k, i * k + k)).join(',')}`;
      if (!ids.has(key)) ids.set(key, ids.size);
      return ids.get(key)!;
    });
  };

  it('numbers groups in order of first appearance, counts their rows and names a first row of each', () => {
    const x = new Float64Array([1, 0, 0, 1, 1, 0, 2, 5, 0, 1]);
    const g = groupEqualRows(x, 5, 2);
    expect(g.size).toBe(3);
    expect(Array.from(g.group)).toEqual([0, 1, 0, 2, 1]);
    expect(Array.from(g.first)).toEqual([0, 1, 3]);
    expect(Array.from(g.count)).toEqual([2, 2, 1]);
  });

  it('a label (an outcome) splits rows with equal values', () => {
    const g = groupEqualRows(new Float64Array([3, 3, 3]), 3, 1, new Uint8Array([1, 0, 1]));
    expect(Array.from(g.group)).toEqual([0, 1, 0]);
  });

  it('the same grouping as the obvious one on many rows of few patterns and of many (hash collisions included)', () => {
    const rnd = prng(4242);
    for (const [n, k, levels] of [[20_000, 4, 3], [5_000, 3, 1000], [3, 1, 2]] as const) {
      const x = new Float64Array(n * k);
      for (let i = 0; i < x.length; i++) x[i] = Math.floor(rnd() * levels) / 7;
      const label = Uint8Array.from({ length: n }, () => (rnd() < 0.3 ? 1 : 0));
      for (const l of [undefined, label]) {
        const g = groupEqualRows(x, n, k, l);
        const want = naive(x, n, k, l);
        expect(Array.from(g.group)).toEqual(want);
        expect(g.size).toBe(new Set(want).size);
        expect(g.count.reduce((a, b) => a + b, 0)).toBe(n);
      }
    }
  });

  it('a subarray view is read where it starts', () => {
    const buf = new Float64Array([9, 9, 1, 2, 1, 2]);
    const g = groupEqualRows(buf.subarray(2), 2, 2);
    expect(Array.from(g.group)).toEqual([0, 0]);
  });
});

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { groupByTime, radixSort } from '@/lib/stats/internal';
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

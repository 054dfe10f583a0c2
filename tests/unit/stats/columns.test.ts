/**
 * coxPHColumns and logisticRegressionColumns take the rows as typed-array columns (no object per
 * row, for the outcomes area's models at 100,000 cases). They must be the SAME fit as coxPH and
 * logisticRegression on the same rows, to the last bit (those are checked against R in
 * tests/reference), clusters numbered in order of first appearance as the row versions number them.
 */
import { describe, expect, it } from 'vitest';
import { coxPH, coxPHColumns, logisticRegression, logisticRegressionColumns } from '@/lib/stats';
import { generate, prng } from '../../reference/datasets';

const data = generate({ n: 400, seed: 7, groups: 3, grid: 0.5, scale: 10, censorMax: 30 });
const rnd = prng(11);
// a third covariate and a cluster id per row: 130 "patients" of one to several rows, as strings
const rows = data.map((r, i) => ({ ...r, x3: Math.round(rnd() * 40) / 10, patient: `p${(i * 7919) % 130}` }));

/** Clusters numbered in order of first appearance, as the row versions number their `cluster` values. */
function clusterIndex(ids: readonly string[]): Int32Array {
  const seen = new Map<string, number>();
  return Int32Array.from(ids, (id) => {
    let g = seen.get(id);
    if (g === undefined) seen.set(id, (g = seen.size));
    return g;
  });
}
const covariates = (p: 2 | 3) => rows.map((r) => (p === 2 ? [r.x1, r.x2] : [r.x1, r.x2, r.x3]));
const flat = (xs: number[][]) => Float64Array.from(xs.flat());

describe('coxPHColumns: the same fit as coxPH', () => {
  for (const p of [2, 3] as const) {
    for (const ties of ['efron', 'breslow'] as const) {
      it(`${p} covariates (the ${p === 2 ? 'two-covariate' : 'general'} path), ${ties} ties, clusters by patient`, () => {
        const xs = covariates(p);
        const want = coxPH(rows.map((r, i) => ({ time: r.time, event: r.event, x: xs[i]!, cluster: r.patient })), { ties });
        const time = Float64Array.from(rows, (r) => r.time);
        const before = time.slice();
        const got = coxPHColumns({ time, event: Uint8Array.from(rows, (r) => (r.event ? 1 : 0)), p, x: flat(xs), cluster: clusterIndex(rows.map((r) => r.patient)) }, { ties });
        expect(got).toEqual(want);
        expect(got.robustSe).toHaveLength(p);
        expect(time).toEqual(before); // the caller's times are not sorted in place
      });
    }
  }
  it('without clusters: no robustSe, as coxPH', () => {
    const want = coxPH(rows.map((r) => ({ time: r.time, event: r.event, x: [r.x1, r.x2] })));
    const got = coxPHColumns({ time: Float64Array.from(rows, (r) => r.time), event: Uint8Array.from(rows, (r) => (r.event ? 1 : 0)), p: 2, x: flat(covariates(2)) });
    expect(got).toEqual(want);
    expect(got.robustSe).toBeUndefined();
  });
  it('refuses what coxPH refuses, and columns of the wrong length', () => {
    const time = new Float64Array([1, 2, 3]);
    const event = new Uint8Array([1, 0, 1]);
    expect(() => coxPHColumns({ time, event, p: 1, x: new Float64Array([1, 2]) })).toThrow(/expected 3 events and 3 covariate values/);
    expect(() => coxPHColumns({ time, event: new Uint8Array([0, 0, 0]), p: 1, x: new Float64Array([1, 2, 3]) })).toThrow(/at least one event/);
    expect(() => coxPHColumns({ time: new Float64Array([1, -2, 3]), event, p: 1, x: new Float64Array([1, 2, 3]) })).toThrow(/row 1: time/);
    expect(() => coxPHColumns({ time, event: new Uint8Array([1, 2, 1]), p: 1, x: new Float64Array([1, 2, 3]) })).toThrow(/row 1: event/);
    expect(() => coxPHColumns({ time, event, p: 1, x: new Float64Array([1, Number.NaN, 3]) })).toThrow(/row 1: covariate 0 must be a finite number/);
    expect(() => coxPHColumns({ time, event, p: 1, x: new Float64Array([2, 2, 2]) })).toThrow(/constant/);
    expect(() => coxPHColumns({ time, event, p: 0, x: new Float64Array(0) })).toThrow(/at least one covariate/);
    expect(() => coxPHColumns({ time, event, p: 1, x: new Float64Array([1, 2, 3]), cluster: new Int32Array([0, 1]) })).toThrow(/cluster index for each/);
  });
});

describe('logisticRegressionColumns: the same fit as logisticRegression', () => {
  // y: an event by time 8 (about half the rows)
  const y = rows.map((r) => r.event && r.time <= 8);
  it('with clusters by patient (HC1 robust errors)', () => {
    const xs = covariates(3);
    const want = logisticRegression(rows.map((r, i) => ({ y: y[i]!, x: xs[i]!, cluster: r.patient })));
    const got = logisticRegressionColumns({ y: Uint8Array.from(y, (v) => (v ? 1 : 0)), p: 3, x: flat(xs), cluster: clusterIndex(rows.map((r) => r.patient)) });
    expect(got).toEqual(want);
    expect(got.robustSe).toHaveLength(4);
  });
  it('without clusters, and the same refusals', () => {
    const xs = covariates(2);
    const want = logisticRegression(rows.map((r, i) => ({ y: y[i]!, x: xs[i]! })));
    expect(logisticRegressionColumns({ y: Uint8Array.from(y, (v) => (v ? 1 : 0)), p: 2, x: flat(xs) })).toEqual(want);
    expect(() => logisticRegressionColumns({ y: new Uint8Array([1, 1, 1]), p: 1, x: new Float64Array([0, 1, 2]) })).toThrow(/both outcomes/);
    expect(() => logisticRegressionColumns({ y: new Uint8Array([1, 0, 1]), p: 1, x: new Float64Array([0, 1]) })).toThrow(/expected 3 covariate values/);
    expect(() => logisticRegressionColumns({ y: new Uint8Array([1, 0, 3, 0]), p: 1, x: new Float64Array([0, 1, 2, 3]) })).toThrow(/row 2: y/);
    expect(() => logisticRegressionColumns({ y: new Uint8Array([1, 0, 1, 0]), p: 1, x: new Float64Array([0, 1, 2, 3]), cluster: new Int32Array([0, 0, 0, 0]) })).toThrow(/at least two clusters/);
  });
});

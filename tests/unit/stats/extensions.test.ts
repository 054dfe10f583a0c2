/**
 * Unit checks of the issue-11 statistics on examples worked by hand, textbook
 * identities and edge cases. Their agreement with R on generated data is in
 * tests/reference/r-extensions.test.ts.
 */
import { describe, expect, it } from 'vitest';
import {
  cohenKappa,
  coxPH,
  cumulativeIncidence,
  funnelLimits,
  kaplanMeier,
  logRank,
  logisticRegression,
  turnbull,
  type LogRankObservation,
} from '@/lib/stats';
import { generate, prng } from '../../reference/datasets';

describe('funnelLimits: Spiegelhalter (2005, Stat Med 24:1185), Appendix A.1.1 (formula from memory), worked by hand', () => {
  it('n = 10, p0 = 0.5, 95%: F(1) = 11/1024, F(2) = 56/1024 give the lower limit (2 - 0.6756)/10', () => {
    // r = 2 is the smallest r with F(r) >= 0.025; alpha = (56/1024 - 0.025) / (45/1024)
    const alphaLow = (56 / 1024 - 0.025) / (45 / 1024);
    // upper: F(7) = 968/1024 < 0.975 <= F(8) = 1013/1024
    const alphaHigh = (1013 / 1024 - 0.975) / (45 / 1024);
    const f = funnelLimits(0.5, 10, 0.95);
    expect(f.lower).toBeCloseTo((2 - alphaLow) / 10, 12);
    expect(f.upper).toBeCloseTo((8 - alphaHigh) / 10, 12);
    expect(f.lower).toBeCloseTo(0.13244, 5);
    expect(f.upper).toBeCloseTo(0.76756, 5);
  });
  it('n = 2, p0 = 0.5: the lower limit would be -0.45 and is clipped to 0; the upper is (2 - 0.1)/2', () => {
    expect(funnelLimits(0.5, 2, 0.95)).toEqual({ lower: 0, upper: expect.closeTo(0.95, 14) as unknown as number });
  });
  it('99.8% limits lie outside the 95% ones, and both narrow towards p0 as n grows', () => {
    let prev = { lower: 0, upper: 1 };
    for (const n of [20, 100, 500, 2500]) {
      const a = funnelLimits(0.85, n, 0.95);
      const b = funnelLimits(0.85, n, 0.998);
      expect(b.lower).toBeLessThan(a.lower);
      expect(b.upper).toBeGreaterThan(a.upper);
      expect(a.lower).toBeGreaterThan(prev.lower);
      expect(a.upper).toBeLessThan(prev.upper);
      expect(a.lower).toBeLessThan(0.85);
      expect(a.upper).toBeGreaterThan(0.85);
      prev = a;
    }
  });
  it('rejects impossible arguments with a clear message', () => {
    expect(() => funnelLimits(0, 10, 0.95)).toThrow(/p0/);
    expect(() => funnelLimits(1, 10, 0.95)).toThrow(/p0/);
    expect(() => funnelLimits(0.5, 0, 0.95)).toThrow(/n must be/);
    expect(() => funnelLimits(0.5, 2.5, 0.95)).toThrow(/n must be/);
    expect(() => funnelLimits(0.5, 10, 95)).toThrow(/coverage/);
  });
});

describe('turnbull: examples worked by hand', () => {
  it('disjoint intervals each get their share', () => {
    const rows = turnbull([
      { left: 0, right: 1 },
      { left: 1, right: 2 },
      { left: 2, right: 3 },
      { left: 3, right: 4 },
    ]);
    expect(rows.map((r) => [r.lower, r.upper])).toEqual([
      [0, 1],
      [1, 2],
      [2, 3],
      [3, 4],
    ]);
    rows.forEach((r, k) => {
      expect(r.probability).toBeCloseTo(0.25, 9);
      expect(r.survival).toBeCloseTo(0.75 - 0.25 * k, 9);
    });
  });
  it('[1, 1], (0, 2], (1, 3]: innermost {1} and (1, 2]; likelihood p1 (p1 + p2) p2 is largest at 1/2, 1/2', () => {
    const rows = turnbull([
      { left: 1, right: 1 },
      { left: 0, right: 2 },
      { left: 1, right: 3 },
    ]);
    expect(rows.map((r) => [r.lower, r.upper])).toEqual([
      [1, 1],
      [1, 2],
    ]);
    expect(rows[0].probability).toBeCloseTo(0.5, 8);
    expect(rows[0].survival).toBeCloseTo(0.5, 8);
    expect(rows[1].survival).toBeCloseTo(0, 8);
  });
  it('(a, t] holds t and (t, b] does not (interval2 ends): (0, 2] and (2, 4] are disjoint, (1, 2] ∩ [2, 2] is {2}', () => {
    expect(turnbull([{ left: 0, right: 2 }, { left: 2, right: 4 }]).length).toBe(2);
    const rows = turnbull([{ left: 1, right: 2 }, { left: 2, right: 2 }]);
    expect(rows).toEqual([{ lower: 2, upper: 2, probability: 1, survival: 0 }]);
  });
  it('exact times and right-censoring: the Kaplan–Meier curve', () => {
    const data = generate({ n: 200, seed: 5, groups: 1, grid: 1, scale: 8, censorMax: 20 });
    const km = kaplanMeier(data.map((r) => ({ time: r.time, event: r.event }))).filter((s) => s.nEvent > 0);
    const tb = turnbull(data.map((r) => ({ left: r.time, right: r.event ? r.time : null })));
    expect(tb.length).toBe(km.length);
    tb.forEach((row, k) => {
      expect(row.upper).toBe(km[k].time);
      expect(row.survival).toBeCloseTo(km[k].survival, 7);
    });
  });
  it('meets the Kuhn–Tucker conditions of the maximum likelihood on visit-like data', () => {
    const rnd = prng(9);
    const data = Array.from({ length: 400 }, () => {
      const l = 30 * Math.floor(rnd() * 20);
      return rnd() < 0.3 ? { left: l, right: null } : { left: l, right: l + 30 * (1 + Math.floor(rnd() * 3)) };
    });
    const rows = turnbull(data);
    const tail = rows[rows.length - 1].survival;
    const probOf = (o: { left: number; right: number | null }) =>
      rows.reduce((s, r) => s + (r.lower >= o.left && (o.right === null || r.upper <= o.right) ? r.probability : 0), o.right === null ? tail : 0);
    // d_j = (1/N) sum_i [j in i] / P_i is 1 on every interval with mass
    for (const r of rows) {
      const d = data.reduce((s, o) => s + (r.lower >= o.left && (o.right === null || r.upper <= o.right) ? 1 / probOf(o) : 0), 0) / data.length;
      expect(d).toBeCloseTo(1, 6);
    }
  });
  it('all right-censored: no interval carries mass (S stays 1); bad input throws', () => {
    expect(turnbull([{ left: 3, right: null }, { left: 5, right: null }])).toEqual([]);
    expect(() => turnbull([])).toThrow(/at least one/);
    expect(() => turnbull([{ left: 3, right: 2 }])).toThrow(/right must be/);
    expect(() => turnbull([{ left: -1, right: 2 }])).toThrow(/left must be/);
    expect(() => turnbull([{ left: 1, right: Infinity }])).toThrow(/right must be/);
  });
});

describe('cumulativeIncidence: worked by hand and identities', () => {
  it('times 1 (A), 2 (B), 3 (censored), 4 (A): A 1/4 then 3/4, B 1/4', () => {
    const res = cumulativeIncidence([
      { time: 1, cause: 'A' },
      { time: 2, cause: 'B' },
      { time: 3, cause: null },
      { time: 4, cause: 'A' },
    ]);
    expect(Object.keys(res)).toEqual(['A', 'B']);
    expect(res.A.map((r) => r.incidence)).toEqual([0.25, 0.25, 0.25, 0.75]);
    expect(res.B.map((r) => r.incidence)).toEqual([0, 0.25, 0.25, 0.25]);
    expect(res.B[0]).toMatchObject({ lower: 0, upper: 0, se: 0, grayVariance: 0 });
  });
  it('one cause: 1 - Kaplan–Meier', () => {
    const data = generate({ n: 300, seed: 3, groups: 1, grid: 1, scale: 10, censorMax: 25 });
    const km = kaplanMeier(data.map((r) => ({ time: r.time, event: r.event })));
    const ci = cumulativeIncidence(data.map((r) => ({ time: r.time, cause: r.event ? 'failure' : null }))).failure;
    expect(ci.length).toBe(km.length);
    ci.forEach((row, k) => expect(row.incidence).toBeCloseTo(1 - km[k].survival, 12));
  });
  it('no censoring: the incidence is the observed share and its jackknife variance p (1 - p) / n', () => {
    const rnd = prng(4);
    const rows = Array.from({ length: 90 }, () => ({ time: 1 + Math.floor(rnd() * 12), cause: rnd() < 0.6 ? 'a' : 'b' }));
    const res = cumulativeIncidence(rows);
    for (const cause of ['a', 'b']) {
      for (const row of res[cause]) {
        const p = rows.filter((r) => r.cause === cause && r.time <= row.time).length / rows.length;
        expect(row.incidence).toBeCloseTo(p, 12);
        expect(row.se).toBeCloseTo(Math.sqrt((p * (1 - p)) / rows.length), 12);
      }
    }
  });
  it('all censored: no cause, no rows; bad input throws', () => {
    expect(cumulativeIncidence([{ time: 1, cause: null }])).toEqual({});
    expect(() => cumulativeIncidence([])).toThrow(/at least one/);
    expect(() => cumulativeIncidence([{ time: -1, cause: 'a' }])).toThrow(/time/);
    expect(() => cumulativeIncidence([{ time: 1, cause: '' }])).toThrow(/cause/);
  });
});

describe('logisticRegression: textbook identities', () => {
  // One binary covariate: the fit reproduces the 2x2 table, slope = log odds ratio, and its
  // standard error is Woolf's sqrt(1/a + 1/b + 1/c + 1/d) (e.g. Agresti, Categorical Data Analysis).
  const table = { exposedYes: 30, exposedNo: 20, unexposedYes: 15, unexposedNo: 35 };
  const rows = [
    ...Array.from({ length: table.exposedYes }, () => ({ y: true, x: [1] })),
    ...Array.from({ length: table.exposedNo }, () => ({ y: false, x: [1] })),
    ...Array.from({ length: table.unexposedYes }, () => ({ y: true, x: [0] })),
    ...Array.from({ length: table.unexposedNo }, () => ({ y: false, x: [0] })),
  ];
  it('a 2x2 table: intercept = log odds among the unexposed, slope = log odds ratio with Woolf\'s standard error', () => {
    const res = logisticRegression(rows);
    expect(res.coef[0]).toBeCloseTo(Math.log(15 / 35), 8);
    expect(res.coef[1]).toBeCloseTo(Math.log((30 * 35) / (20 * 15)), 8);
    expect(res.oddsRatio[1]).toBeCloseTo(3.5, 7);
    // to 6 digits: like R's glm, the errors come from the weights of the last IRLS step, which stops
    // when the deviance changes by less than 1e-8 (relative)
    expect(res.se[1]).toBeCloseTo(Math.sqrt(1 / 30 + 1 / 20 + 1 / 15 + 1 / 35), 6);
    expect(res.robustSe).toBeUndefined();
  });
  it('clusters of one row each: the robust errors are HC1 (a factor n / (n - k) on the plain sandwich)', () => {
    const res = logisticRegression(rows.map((r, i) => ({ ...r, cluster: i })));
    // for a saturated 2x2 model the plain sandwich equals the model-based variance
    const n = rows.length;
    res.se.forEach((se, k) => expect((res.robustSe as number[])[k]).toBeCloseTo(se * Math.sqrt(n / (n - 2)), 6));
  });
  it('throws on separation, one outcome only, collinearity and mixed clusters', () => {
    expect(() => logisticRegression([0, 1, 2, 3, 4, 5].map((v) => ({ y: v > 2, x: [v] })))).toThrow(/separation|converge/);
    expect(() => logisticRegression([0, 1, 2].map((v) => ({ y: true, x: [v] })))).toThrow(/both outcomes/);
    expect(() => logisticRegression([0, 1, 2, 3].map((v) => ({ y: v % 2 === 0, x: [v, 2 * v] })))).toThrow(/collinear/);
    expect(() => logisticRegression([{ y: true, x: [1], cluster: 1 }, { y: false, x: [2] }, { y: true, x: [3] }])).toThrow(/cluster/);
  });
});

describe('coxPH with clusters', () => {
  const data = generate({ n: 300, seed: 21, groups: 2, grid: 0.01, scale: 10, censorMax: 30 });
  it('each row duplicated and clustered by its original row (Breslow): same coefficients, naive SE / sqrt 2, robust SE unchanged', () => {
    const once = coxPH(data.map((r, i) => ({ time: r.time, event: r.event, x: [r.x1, r.x2], cluster: i })), { ties: 'breslow' });
    const twice = coxPH(
      data.flatMap((r, i) => [0, 1].map(() => ({ time: r.time, event: r.event, x: [r.x1, r.x2], cluster: i }))),
      { ties: 'breslow' },
    );
    twice.coef.forEach((b, k) => expect(b).toBeCloseTo(once.coef[k], 9));
    twice.se.forEach((s, k) => expect(s).toBeCloseTo(once.se[k] / Math.SQRT2, 9));
    twice.robustSe?.forEach((s, k) => expect(s).toBeCloseTo((once.robustSe as number[])[k], 9));
    // the intervals use the robust error
    expect(twice.lower[0]).toBeCloseTo(Math.exp(twice.coef[0] - 1.959963984540054 * (twice.robustSe as number[])[0]), 12);
  });
  it('without clusters there is no robustSe; mixing rows with and without a cluster throws', () => {
    expect(coxPH(data.map((r) => ({ time: r.time, event: r.event, x: [r.x1] }))).robustSe).toBeUndefined();
    expect(() => coxPH(data.map((r, i) => ({ time: r.time, event: r.event, x: [r.x1], ...(i === 5 ? {} : { cluster: i }) })))).toThrow(/cluster/);
    expect(() => coxPH(data.map((r, i) => ({ time: r.time, event: r.event, x: [r.x1], ...(i === 5 ? { cluster: i } : {}) })))).toThrow(/cluster/);
  });
});

describe('stratified logRank', () => {
  const data = generate({ n: 400, seed: 22, groups: 3, grid: 1, scale: 20, censorMax: 60 });
  const byGroup = (stratum: (i: number) => string | number | undefined) => {
    const groups: Record<string, LogRankObservation[]> = {};
    data.forEach((r, i) => {
      const s = stratum(i);
      (groups[r.group] ??= []).push(s === undefined ? { time: r.time, event: r.event } : { time: r.time, event: r.event, stratum: s });
    });
    return groups;
  };
  it('one stratum for all is the unstratified test', () => {
    const a = logRank(byGroup(() => undefined));
    const b = logRank(byGroup(() => 'all'));
    expect(b.chiSquare).toBeCloseTo(a.chiSquare, 10);
    expect(b.expected).toEqual(Object.fromEntries(Object.entries(a.expected).map(([g, e]) => [g, expect.closeTo(e, 9)])));
  });
  it('observed and expected add up over the strata; a stratum missing on one observation throws', () => {
    const st = logRank(byGroup((i) => i % 3));
    let parts = 0;
    for (const s of [0, 1, 2]) {
      const groups: Record<string, LogRankObservation[]> = {};
      data.forEach((r, i) => {
        if (i % 3 === s) (groups[r.group] ??= []).push({ time: r.time, event: r.event });
      });
      parts += logRank(groups).expected.g1;
    }
    expect(st.expected.g1).toBeCloseTo(parts, 9);
    expect(() => logRank(byGroup((i) => (i === 7 ? undefined : 'x')))).toThrow(/stratum/);
  });
});

describe('cohenKappa with a scale', () => {
  // PAI scores 1–5 in which nobody used 3: with the scale, 2 and 4 stay two steps apart
  const pairs: [number, number][] = [
    [1, 1],
    [2, 2],
    [2, 4],
    [4, 4],
    [5, 5],
    [4, 5],
    [1, 2],
    [5, 4],
  ];
  it('equals the kappa with the categories listed, and differs from the one on the scores used (weights shifted)', () => {
    for (const weights of ['linear', 'quadratic'] as const) {
      const withScale = cohenKappa(pairs, { weights, scale: [1, 2, 3, 4, 5] });
      expect(withScale.kappa).toBe(cohenKappa(pairs, { weights, categories: [1, 2, 3, 4, 5] }).kappa);
      expect(withScale.kappa).not.toBeCloseTo(cohenKappa(pairs, { weights }).kappa, 3);
    }
    expect(() => cohenKappa([[1, 6]], { scale: [1, 2, 3, 4, 5] })).toThrow(/not in the categories/);
  });
});

import { describe, expect, it } from 'vitest';
import { chiSquareTest, cohenKappa, coxPH, fisherExact2x2, weightedKappaFromTable, wilsonInterval } from '@/lib/stats';
import { placebo, sixMP } from './freireich';

describe('wilsonInterval against Newcombe (1998, Stat Med 17:857–872), method 3', () => {
  it('81/263 → 0.2553 to 0.3662 (the paper\'s worked example)', () => {
    const w = wilsonInterval(81, 263);
    expect(w.estimate).toBeCloseTo(81 / 263, 12);
    expect(w.lower).toBeCloseTo(0.2553, 4);
    expect(w.upper).toBeCloseTo(0.3662, 4);
  });
  it('the other examples of Newcombe\'s Table II (values from memory): 15/148, 0/20, 1/29', () => {
    expect(wilsonInterval(15, 148).lower).toBeCloseTo(0.0624, 4);
    expect(wilsonInterval(15, 148).upper).toBeCloseTo(0.1605, 4);
    expect(wilsonInterval(0, 20)).toMatchObject({ estimate: 0, lower: 0 });
    expect(wilsonInterval(0, 20).upper).toBeCloseTo(0.1611, 4);
    expect(wilsonInterval(1, 29).lower).toBeCloseTo(0.0061, 4);
    expect(wilsonInterval(1, 29).upper).toBeCloseTo(0.1718, 4);
  });
  it('gives exactly 1 as the upper bound at n/n, and rejects impossible counts', () => {
    expect(wilsonInterval(10, 10).upper).toBe(1);
    expect(() => wilsonInterval(1, 0)).toThrow(/n must be/);
    expect(() => wilsonInterval(11, 10)).toThrow(/successes/);
    expect(() => wilsonInterval(2.5, 10)).toThrow(/successes/);
    expect(() => wilsonInterval(2, 10, 1)).toThrow(/confidence level/);
  });
});

describe("kappa against Cohen's (1968, Psychol Bull 70:213–220) worked example", () => {
  // Two psychiatrists' diagnoses of 200 patients (personality disorder, neurosis,
  // psychosis) as proportions, with Cohen's disagreement weights 1, 3 and 6.
  // The table and weights are reproduced from memory of the paper; the kappa
  // values (0.492 unweighted, as the paper reports, and 1 - 0.90/1.38 = 0.348
  // weighted) follow from them by hand.
  const p = [
    [0.44, 0.07, 0.09],
    [0.05, 0.2, 0.05],
    [0.01, 0.03, 0.06],
  ];
  const v = [
    [0, 1, 3],
    [1, 0, 6],
    [3, 6, 0],
  ];
  it('unweighted: p_o = .70, p_c = .41, kappa = .492', () => {
    const k = weightedKappaFromTable(p);
    expect(k.observedAgreement).toBeCloseTo(0.7, 12);
    expect(k.expectedAgreement).toBeCloseTo(0.41, 12);
    expect(k.kappa).toBeCloseTo(0.29 / 0.59, 12);
    expect(k.kappa).toBeCloseTo(0.492, 3);
  });
  it('weighted: sum v p_o = .90, sum v p_c = 1.38, kappa_w = .348', () => {
    expect(weightedKappaFromTable(p, v).kappa).toBeCloseTo(1 - 0.9 / 1.38, 12);
  });
  it('cohenKappa on the 200 pairs behind the table gives the same unweighted kappa', () => {
    const pairs: [number, number][] = [];
    p.forEach((row, i) => row.forEach((q, j) => {
      for (let k = 0; k < Math.round(q * 200); k++) pairs.push([i + 1, j + 1]);
    }));
    expect(pairs).toHaveLength(200);
    expect(cohenKappa(pairs).kappa).toBeCloseTo(0.29 / 0.59, 12);
  });
  it('linear and quadratic weights by category position (as scikit-learn): perfect agreement is 1', () => {
    const same: [number, number][] = [[1, 1], [2, 2], [3, 3], [5, 5]];
    for (const weights of ['none', 'linear', 'quadratic'] as const) expect(cohenKappa(same, { weights }).kappa).toBeCloseTo(1, 12);
  });
  it('is an error, not NaN, when both raters used one category', () => {
    expect(() => cohenKappa([[2, 2], [2, 2]])).toThrow(/undefined/);
    expect(() => cohenKappa([])).toThrow(/at least one/);
    expect(() => cohenKappa([[1, 7]], { categories: [1, 2] })).toThrow(/not in the categories/);
  });
});

describe('tests on tables', () => {
  it("Fisher's exact test: the tea-tasting table [[3,1],[1,3]] has two-sided p = 0.4857 (Fisher 1935; R's fisher.test example)", () => {
    expect(fisherExact2x2([[3, 1], [1, 3]]).pValue).toBeCloseTo(0.4857, 4);
  });
  it('Fisher: margins that allow one table only give p = 1', () => {
    expect(fisherExact2x2([[0, 0], [4, 5]]).pValue).toBe(1);
    expect(fisherExact2x2([[0, 0], [0, 0]]).pValue).toBe(1);
  });
  it('Pearson chi-square by hand (common practice): [[10,20],[30,40]] expected 12/18/28/42, chi-square 0.7937 on 1 df', () => {
    const r = chiSquareTest([[10, 20], [30, 40]]);
    expect(r.chiSquare).toBeCloseTo(4 / 12 + 4 / 18 + 4 / 28 + 4 / 42, 12);
    expect(r.df).toBe(1);
    expect(r.pValue).toBeCloseTo(0.373, 3);
  });
  it('chi-square: a zero margin or a 1-row table is an error', () => {
    expect(() => chiSquareTest([[0, 0], [3, 4]])).toThrow(/sums to zero/);
    expect(() => chiSquareTest([[1, 2]])).toThrow(/at least 2 rows/);
    expect(() => chiSquareTest([[1, -2], [3, 4]])).toThrow(/count/);
  });
  it('chi-square keeps precision for tiny p-values (upper incomplete gamma)', () => {
    const r = chiSquareTest([[900, 100], [100, 900]]);
    expect(r.pValue).toBeGreaterThan(0);
    expect(r.pValue).toBeLessThan(1e-200);
  });
});

describe('coxPH on the Freireich data (treatment placebo = 1 vs 6-MP = 0)', () => {
  const rows = [...sixMP.map((o) => ({ ...o, x: [0] })), ...placebo.map((o) => ({ ...o, x: [1] }))];
  it('Breslow ties: coef 1.509, HR 4.523, se 0.410, log L -86.38 (Kleinbaum & Klein, Stata output)', () => {
    const f = coxPH(rows, { ties: 'breslow' });
    expect(f.coef[0]).toBeCloseTo(1.509, 3);
    expect(f.hazardRatio[0]).toBeCloseTo(4.523, 3);
    expect(f.se[0]).toBeCloseTo(0.41, 3);
    expect(f.logLik).toBeCloseTo(-86.38, 2);
  });
  it("Efron ties (default): coef 1.572, HR 4.82, se 0.412 (R's coxph on these data, from memory of its gehan example)", () => {
    const f = coxPH(rows);
    expect(f.coef[0]).toBeCloseTo(1.572, 3);
    expect(f.hazardRatio[0]).toBeCloseTo(4.82, 2);
    expect(f.se[0]).toBeCloseTo(0.412, 3);
    expect(f.lower[0]).toBeLessThan(f.hazardRatio[0]);
    expect(f.upper[0]).toBeGreaterThan(f.hazardRatio[0]);
  });
});

import { describe, expect, it } from 'vitest';
import { coxPH, kaplanMeier, logRank, medianSurvival, restrictedMean } from '@/lib/stats';

// Defined results or clear errors, never NaN (Lamina rule for lib/stats).
describe('Kaplan–Meier edge cases', () => {
  it('empty input gives no rows; its median is not reached', () => {
    expect(kaplanMeier([])).toEqual([]);
    expect(medianSurvival([])).toEqual({ median: null, lower: null, upper: null });
    expect(() => restrictedMean([], 10)).toThrow(/at least one/);
  });
  it('all censored: survival 1 with bounds 1 on every scale, median not reached', () => {
    const obs = [3, 5, 5, 9].map((time) => ({ time, event: false }));
    for (const confType of ['log', 'log-log', 'plain'] as const) {
      const km = kaplanMeier(obs, { confType });
      expect(km.every((s) => s.survival === 1 && s.lower === 1 && s.upper === 1)).toBe(true);
      expect(medianSurvival(km).median).toBeNull();
    }
    expect(restrictedMean(kaplanMeier(obs), 20)).toBe(20);
  });
  it('ties of events and censorings at one time: the censored are at risk there (R survival)', () => {
    const km = kaplanMeier([
      { time: 2, event: true },
      { time: 2, event: false },
      { time: 2, event: true },
      { time: 4, event: true },
    ]);
    expect(km[0]).toMatchObject({ time: 2, nRisk: 4, nEvent: 2, nCensor: 1, survival: 0.5 });
    expect(km[1]).toMatchObject({ time: 4, nRisk: 1, nEvent: 1, survival: 0 });
  });
  it('S = 0 gives bounds 0 (R: NA) on every scale; S = 1 with log-log gives 1 (R: NA)', () => {
    for (const confType of ['log', 'log-log', 'plain'] as const) {
      const km = kaplanMeier([{ time: 1, event: true }, { time: 2, event: true }], { confType });
      expect(km[1]).toMatchObject({ survival: 0, lower: 0, upper: 0 });
      expect(km.every((s) => Number.isFinite(s.lower) && Number.isFinite(s.upper))).toBe(true);
    }
  });
  it('the median sits at the midpoint where the curve is exactly 0.5 over an interval (R print.survfit)', () => {
    const km = kaplanMeier([
      { time: 1, event: true },
      { time: 2, event: true },
      { time: 3, event: false },
      { time: 4, event: true },
    ]);
    expect(km[1].survival).toBe(0.5);
    expect(medianSurvival(km).median).toBe(3);
  });
  it('rejects bad input with a clear message', () => {
    expect(() => kaplanMeier([{ time: -1, event: true }])).toThrow(/time must be/);
    expect(() => kaplanMeier([{ time: Number.NaN, event: true }])).toThrow(/time must be/);
    expect(() => kaplanMeier([{ time: 1, event: 1 as unknown as boolean }])).toThrow(/event must be/);
    expect(() => kaplanMeier([{ time: 1, event: true }], { confType: 'logit' as 'log' })).toThrow(/confType/);
    expect(() => kaplanMeier([{ time: 1, event: true }], { level: 95 })).toThrow(/confidence level/);
    expect(() => restrictedMean(kaplanMeier([{ time: 1, event: true }]), -1)).toThrow(/tau/);
  });
  it('restricted mean before the first time is tau; past the last it carries the last value', () => {
    const km = kaplanMeier([{ time: 2, event: true }, { time: 4, event: false }]);
    expect(restrictedMean(km, 1)).toBe(1);
    expect(restrictedMean(km, 6)).toBe(2 + 0.5 * 4);
  });
});

describe('log-rank edge cases', () => {
  const a = [{ time: 1, event: true }, { time: 3, event: false }];
  it('one group (or only one with observations) is an error', () => {
    expect(() => logRank({ a })).toThrow(/at least two groups/);
    expect(() => logRank({ a, b: [] })).toThrow(/at least two groups/);
    expect(() => logRank({})).toThrow(/at least two groups/);
  });
  it('no events at all: chi-square 0, p = 1', () => {
    const r = logRank({ a: [{ time: 1, event: false }], b: [{ time: 2, event: false }] });
    expect(r).toMatchObject({ chiSquare: 0, pValue: 1, df: 1, observed: { a: 0, b: 0 }, expected: { a: 0, b: 0 } });
  });
  it('an empty group is reported with zeros and does not count towards df', () => {
    const r = logRank({ a, b: [{ time: 2, event: true }, { time: 5, event: true }], c: [] });
    expect(r.df).toBe(1);
    expect(r.observed.c).toBe(0);
    expect(r.expected.c).toBe(0);
    expect(Number.isFinite(r.chiSquare)).toBe(true);
  });
  it('identical groups give chi-square 0', () => {
    const r = logRank({ a, b: a });
    expect(r.chiSquare).toBeCloseTo(0, 12);
    expect(r.pValue).toBeCloseTo(1, 12);
  });
});

describe('Cox edge cases', () => {
  const base = [
    { time: 1, event: true, x: [0] },
    { time: 2, event: true, x: [1] },
    { time: 3, event: false, x: [0] },
    { time: 4, event: true, x: [1] },
    { time: 5, event: true, x: [0] },
  ];
  it('no events is an error', () => {
    expect(() => coxPH(base.map((r) => ({ ...r, event: false })))).toThrow(/at least one event/);
  });
  it('a constant or collinear covariate is an error', () => {
    expect(() => coxPH(base.map((r) => ({ ...r, x: [1] })))).toThrow(/constant/);
    expect(() => coxPH(base.map((r) => ({ ...r, x: [r.x[0], 2 * r.x[0]] })))).toThrow(/singular|collinear/);
  });
  it('monotone likelihood (all events in one level, so the coefficient runs to infinity) stops with a clear error', () => {
    const rows = [
      { time: 1, event: true, x: [1] },
      { time: 2, event: true, x: [1] },
      { time: 3, event: false, x: [0] },
      { time: 4, event: false, x: [0] },
      { time: 5, event: false, x: [1] },
    ];
    expect(() => coxPH(rows)).toThrow(/did not converge|infinite/);
  });
  it('bad rows are errors', () => {
    expect(() => coxPH([])).toThrow(/at least two rows/);
    expect(() => coxPH([{ time: 1, event: true, x: [] }, { time: 2, event: true, x: [] }])).toThrow(/covariate/);
    expect(() => coxPH([{ time: 1, event: true, x: [1] }, { time: 2, event: true, x: [1, 2] }])).toThrow(/covariates like the first row/);
    expect(() => coxPH([{ time: 1, event: true, x: [Number.NaN] }, { time: 2, event: true, x: [1] }])).toThrow(/finite/);
  });
  it('all tied event times still fit, with Efron and Breslow differing', () => {
    const rows = Array.from({ length: 12 }, (_, i) => ({ time: 1 + (i % 2), event: i % 3 !== 0, x: [i % 4 === 0 ? 1 : 0, (i * 7) % 5] }));
    const e = coxPH(rows);
    const b = coxPH(rows, { ties: 'breslow' });
    for (const f of [e, b]) for (const v of [...f.coef, ...f.se, ...f.pValue, f.logLik, f.lrChiSquare]) expect(Number.isFinite(v)).toBe(true);
    expect(e.coef[0]).not.toBeCloseTo(b.coef[0], 6);
  });
});

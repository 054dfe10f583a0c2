import { describe, expect, it } from 'vitest';
import { kaplanMeier, logRank, medianSurvival, restrictedMean } from '@/lib/stats';
import { placebo, sixMP } from './freireich';

const at = (steps: ReturnType<typeof kaplanMeier>, t: number) => {
  const row = steps.find((s) => s.time === t);
  if (!row) throw new Error(`no row at ${t}`);
  return row;
};

describe('kaplanMeier on the Freireich 6-MP data (Kleinbaum & Klein)', () => {
  const km = kaplanMeier(sixMP);
  it('matches the printed survival estimates', () => {
    // Kleinbaum & Klein, KM table for the 6-MP group: S(6)=0.8571, S(7)=0.8067,
    // S(10)=0.7529, S(13)=0.6902, S(16)=0.6275, S(22)=0.5378, S(23)=0.4482
    expect(at(km, 6).survival).toBeCloseTo(0.8571, 4);
    expect(at(km, 7).survival).toBeCloseTo(0.8067, 4);
    expect(at(km, 10).survival).toBeCloseTo(0.7529, 4);
    expect(at(km, 13).survival).toBeCloseTo(0.6902, 4);
    expect(at(km, 16).survival).toBeCloseTo(0.6275, 4);
    expect(at(km, 22).survival).toBeCloseTo(0.5378, 4);
    expect(at(km, 23).survival).toBeCloseTo(0.4482, 4);
  });
  it('counts those censored at an event time as at risk (Kleinbaum & Klein: n=21 at 6, 17 at 7)', () => {
    expect(at(km, 6)).toMatchObject({ nRisk: 21, nEvent: 3, nCensor: 1 });
    expect(at(km, 7)).toMatchObject({ nRisk: 17, nEvent: 1, nCensor: 0 });
    expect(at(km, 23)).toMatchObject({ nRisk: 6, nEvent: 1 });
  });
  it('has one row per distinct time, including censoring-only times (R survfit)', () => {
    expect(km.map((s) => s.time)).toEqual([6, 7, 9, 10, 11, 13, 16, 17, 19, 20, 22, 23, 25, 32, 34, 35]);
  });
  it('gives the median 23 weeks for 6-MP and 8 for placebo (Kleinbaum & Klein)', () => {
    expect(medianSurvival(km).median).toBe(23);
    expect(medianSurvival(kaplanMeier(placebo)).median).toBe(8);
  });
  it('placebo curve reaches 0 at 23 weeks with defined bounds', () => {
    const p = kaplanMeier(placebo);
    const last = p[p.length - 1];
    expect(last).toMatchObject({ time: 23, survival: 0, lower: 0, upper: 0 });
  });
  it('restricted mean of the placebo group up to its last time equals its mean (all events: 8.667 weeks)', () => {
    // all 21 placebo times are events, so the area under the KM curve is the sample mean: 182/21
    expect(restrictedMean(kaplanMeier(placebo), 23)).toBeCloseTo(182 / 21, 12);
  });
});

describe('logRank on the Freireich data (Kleinbaum & Klein)', () => {
  const lr = logRank({ '6-MP': sixMP, placebo });
  it('chi-square 16.79 on 1 df', () => {
    // Kleinbaum & Klein: O1 = 9, E1 = 19.25, O2 = 21, E2 = 10.75, log-rank = 16.79
    expect(lr.chiSquare).toBeCloseTo(16.79, 2);
    expect(lr.df).toBe(1);
    expect(lr.observed).toEqual({ '6-MP': 9, placebo: 21 });
    expect(lr.expected['6-MP']).toBeCloseTo(19.25, 2);
    expect(lr.expected.placebo).toBeCloseTo(10.75, 2);
    expect(lr.pValue).toBeGreaterThan(0);
    expect(lr.pValue).toBeLessThan(1e-4);
  });
});

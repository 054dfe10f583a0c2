import { describe, expect, it } from 'vitest';
import { funnelLimits } from '@/lib/stats';
import { bandOf, fitCaseMix, funnel, funnelCurve, limitsAt, literatureFor, strictSuccessFor, type JudgedCase } from '@/lib/outcomes/funnel';
import type { OutcomeCase } from '@/lib/outcomes';
import { outcomeCase, present, review } from '../../support/outcome-cases';

// The clinician audit's funnel (lib/outcomes/funnel.ts). Sources: indirect standardisation and
// funnel limits, Spiegelhalter DJ (2005) Funnel plots for comparing institutional performance,
// Stat Med 24:1185–1202; the logistic fit against R's glm (tests/reference/scripts/funnel-reference.R,
// R 4.x, values pasted below); the saturated-model example is worked by hand.
let seq = 0;
function kase(change: Partial<OutcomeCase> & { success?: boolean } = {}): OutcomeCase {
  const { success, ...rest } = change;
  const reviews = success === undefined ? [] : success ? [present(365, 1)] : [review(300, 'extracted', { paiScore: null })];
  return outcomeCase({ id: `c${++seq}`, patientId: `p${seq}`, operatorId: 'a', lesionDiameterMm: 0, reviews, ...rest });
}
const many = (count: number, successes: number, change: Partial<OutcomeCase>) => Array.from({ length: count }, (_, i) => kase({ ...change, success: i < successes }));

describe('the measure', () => {
  it('healed at the 12-month review is a success, an extraction before the window ends a failure, no review unknown', () => {
    expect(strictSuccessFor(kase({ success: true }), 'm12', 365)).toBe(true);
    expect(strictSuccessFor(kase({ success: false }), 'm12', 365)).toBe(false);
    expect(strictSuccessFor(kase(), 'm12', 365)).toBeNull();
    expect(strictSuccessFor(kase({ success: true }), 'latest', 365)).toBe(true);
  });
});

describe('a hand-worked example: treatment kind alone (a saturated model, so each fitted probability is its kind’s observed rate)', () => {
  // Primary: 24 cases, 18 healed (0.75). Retreatment: 16 cases, 8 healed (0.5). p0 = 26/40 = 0.65.
  // Clinician a: 16 primary (14 healed) + 4 retreatment (1 healed): O = 15, E = 16 × 0.75 + 4 × 0.5 = 14.
  // Clinician b: 8 primary (4 healed) + 12 retreatment (7 healed): O = 11, E = 8 × 0.75 + 12 × 0.5 = 12.
  const rows = [
    ...many(16, 14, { operatorId: 'a' }),
    ...many(4, 1, { operatorId: 'a', kind: 'nonsurgical_retreatment' }),
    ...many(8, 4, { operatorId: 'b' }),
    ...many(12, 7, { operatorId: 'b', kind: 'nonsurgical_retreatment' }),
    kase({ operatorId: 'b' }), // not reviewed: a case, not judged
  ];
  const f = funnel(rows, 'm12', 365);

  it('the practice rate is every clinician’s judged cases together', () => {
    expect([f.practice.x, f.practice.n, f.cases]).toEqual([26, 40, 41]);
    expect(f.practice.estimate).toBeCloseTo(0.65, 12);
  });

  it('expected = the sum of predicted probabilities; O/E; adjusted = O/E × p0 (indirect standardisation)', () => {
    expect(f.model?.terms).toEqual(['kind']);
    const [a, b] = f.units;
    expect([a!.id, a!.n, a!.observed, a!.cases]).toEqual(['a', 20, 15, 20]);
    expect(a!.expected).toBeCloseTo(14, 8);
    expect(a!.oe).toBeCloseTo(15 / 14, 8);
    expect(a!.adjusted).toBeCloseTo((15 / 14) * 0.65, 8);
    expect(a!.crude.estimate).toBeCloseTo(0.75, 12);
    expect([b!.id, b!.n, b!.observed, b!.cases]).toEqual(['b', 20, 11, 21]);
    expect(b!.expected).toBeCloseTo(12, 8);
    expect(b!.adjusted).toBeCloseTo((11 / 12) * 0.65, 8);
    // with an intercept, the fitted probabilities sum to the observed successes (the logistic score equation)
    expect(a!.expected! + b!.expected!).toBeCloseTo(26, 8);
  });

  it('the limits are funnelLimits around p0 at each clinician’s n, and the band says where the point sits', () => {
    const l = limitsAt(0.65, 20);
    expect(l.lower95).toBe(funnelLimits(0.65, 20, 0.95).lower);
    expect(l.upper998).toBe(funnelLimits(0.65, 20, 0.998).upper);
    // by hand: 0.75 and 0.55 are within 0.65 ± about 2 × sqrt(0.65 × 0.35 / 20) = 0.65 ± 0.21
    expect(f.units.map((u) => u.crudeBand)).toEqual(['within', 'within']);
    expect(bandOf(0.99, l)).toBe('above-99.8');
    expect(bandOf(0.2, l)).toBe('below-99.8');
    expect(bandOf(l.upper95 + 1e-9, l)).toBe('above-95');
    expect(f.curve[0]!.n).toBe(1);
    expect(f.curve.at(-1)!.n).toBeGreaterThanOrEqual(20);
  });
});

describe('against R’s glm (tests/reference/scripts/funnel-reference.R)', () => {
  // The same deterministic rows as the R script (no random numbers).
  const rows: OutcomeCase[] = [];
  for (let i = 1; i <= 240; i++) {
    const lesion = (i * 7) % 11;
    const pai = 1 + ((i * 3) % 5);
    const kind = i % 3 === 0 ? 'nonsurgical_retreatment' : 'primary_treatment';
    const group = ['molar', 'premolar', 'anterior', 'molar'][i % 4]!;
    const clinician = ['a', 'b', 'c'][((i * 5) % 7) % 3]!;
    const score = 70 - 3 * lesion - 6 * (pai - 1) - 10 * (kind === 'nonsurgical_retreatment' ? 1 : 0) + 8 * (group === 'anterior' ? 1 : 0) + ((i * 37) % 40) - 20;
    rows.push(kase({ operatorId: clinician, lesionDiameterMm: lesion, baselinePai: pai, kind, toothGroup: group, success: score > 35 }));
  }
  const f = funnel(rows, 'm12', 365);

  it('fits every term, with R’s coefficients', () => {
    expect(f.model?.terms).toEqual(['lesion', 'kind', 'group', 'pai']);
    expect([f.model?.n, f.model?.events]).toEqual([240, 147]);
    const byName = Object.fromEntries(f.model!.names.map((n, i) => [n, f.model!.coef[i]!]));
    expect(byName['(intercept)']).toBeCloseTo(5.9317687838397246, 6);
    expect(byName['lesion size before treatment (mm)']).toBeCloseTo(-0.4775404565476322, 6);
    expect(byName['treatment kind: Non-surgical retreatment']).toBeCloseTo(-1.3288434443379717, 6);
    expect(byName['tooth group: anterior']).toBeCloseTo(1.1177894033683062, 6);
    expect(byName['tooth group: premolar']).toBeCloseTo(0.0187385401819169, 6);
    expect(byName['PAI before treatment']).toBeCloseTo(-0.8596095436900553, 6);
  });

  it('expected successes, O/E and adjusted rate per clinician equal R’s', () => {
    const got = Object.fromEntries(f.units.map((u) => [u.id, u]));
    expect(f.practice.estimate).toBeCloseTo(0.6125, 12);
    for (const [id, n, o, e, oe, adj] of [
      ['a', 103, 63, 61.6257270846812, 1.02230031157978, 0.626158940842614],
      ['b', 68, 39, 42.5470310573579, 0.916632701055541, 0.561437529396519],
      ['c', 69, 45, 42.8272418535077, 1.05073308605593, 0.643574015209259],
    ] as const) {
      expect([got[id]!.n, got[id]!.observed]).toEqual([n, o]);
      expect(got[id]!.expected).toBeCloseTo(e, 6);
      expect(got[id]!.oe).toBeCloseTo(oe, 6);
      expect(got[id]!.adjusted).toBeCloseTo(adj, 6);
    }
    expect(f.units.map((u) => u.id)).toEqual(['a', 'c', 'b']); // most judged cases first
  });
});

describe('the model keeps what the data can carry', () => {
  it('a small kind joins the reference level; a constant term is left out', () => {
    const rows: JudgedCase[] = [
      ...many(32, 20, {}),
      ...many(30, 12, { kind: 'nonsurgical_retreatment' }),
      ...many(5, 3, { kind: 'apical_surgery' }),
    ].map((c) => ({ c, y: strictSuccessFor(c, 'm12', 365)! }));
    const { model } = fitCaseMix(rows);
    expect(model?.terms).toEqual(['kind']);
    expect(model?.merged.kind).toEqual({ reference: 'Primary root canal treatment', levels: ['Apical surgery'] });
    expect(model?.left.map((l) => l.term)).toEqual(['lesion', 'group', 'pai']);
  });

  it('too few failures for a coefficient: no model, and the reason', () => {
    const rows = [...many(20, 12, {}), ...many(20, 13, { kind: 'nonsurgical_retreatment' })].map((c) => ({ c, y: strictSuccessFor(c, 'm12', 365)! }));
    // 15 failures: one coefficient needs 10 — fits; now keep only 9 failures
    expect(fitCaseMix(rows).model).not.toBeNull();
    const fewer = [...many(20, 16, {}), ...many(20, 15, { kind: 'nonsurgical_retreatment' })].map((c) => ({ c, y: strictSuccessFor(c, 'm12', 365)! }));
    const r = fitCaseMix(fewer);
    expect(r.model).toBeNull();
    expect(r.reason).toMatch(/too few failures \(9\)/);
    const f = funnel([...many(20, 16, {}), ...many(20, 15, { kind: 'nonsurgical_retreatment', operatorId: 'b' })], 'm12', 365);
    expect(f.modelNote).toMatch(/^Not risk-adjusted/);
    expect(f.units.every((u) => u.expected === null && u.adjusted === null)).toBe(true);
    expect(f.units.every((u) => u.crudeBand !== null)).toBe(true);
  });

  it('every case the same result: no funnel (p0 is 1), no model', () => {
    const f = funnel(many(12, 12, {}), 'm12', 365);
    expect(f.curve).toEqual([]);
    expect(f.units[0]!.crudeBand).toBeNull();
    expect(f.modelNote).toMatch(/same result/);
    expect(funnel([], 'm12', 365).units).toEqual([]);
  });
});

describe('the curve and the literature lines', () => {
  it('every count up to 30, then spaced out to the top; the limits narrow as n grows', () => {
    const c = funnelCurve(0.7, 500);
    expect(c.slice(0, 30).map((l) => l.n)).toEqual(Array.from({ length: 30 }, (_, i) => i + 1));
    expect(c.at(-1)!.n).toBe(500);
    expect(c.length).toBeLessThan(100);
    expect(c.at(-1)!.upper95 - c.at(-1)!.lower95).toBeLessThan(c[29]!.upper95 - c[29]!.lower95);
    expect(c.every((l) => l.lower998 <= l.lower95 && l.upper95 <= l.upper998)).toBe(true);
  });

  it('the reference lines follow the kind filter and name their source (figures from memory)', () => {
    expect(literatureFor(undefined).map((l) => l.rate)).toEqual([0.747, 0.767]);
    expect(literatureFor('primary_treatment').map((l) => l.label)).toEqual(['Ng et al. 2007, primary treatment: 74.7%']);
    expect(literatureFor('apical_surgery')).toEqual([]);
    expect(literatureFor(undefined).every((l) => /Int Endod J/.test(l.source) && /from memory/.test(l.source))).toBe(true);
  });
});

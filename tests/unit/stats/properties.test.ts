import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { coxPH, kaplanMeier, logRank, medianSurvival, restrictedMean, wilsonInterval } from '@/lib/stats';
import { createRandom } from '@/lib/demo/random';

// Property tests (fast-check); the properties are facts of the methods (common practice).
const obsArb = fc.array(
  fc.record({ time: fc.integer({ min: 0, max: 30 }).map((t) => t / 2), event: fc.boolean() }),
  { maxLength: 60 },
);
const confArb = fc.constantFrom('log' as const, 'log-log' as const, 'plain' as const);

function shuffle<T>(xs: readonly T[], seed: number): T[] {
  const out = [...xs];
  const random = createRandom(seed); // Lamina's one seeded generator
  for (let i = out.length - 1; i > 0; i--) {
    const j = random.int(0, i);
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}

describe('Kaplan–Meier properties', () => {
  it('survival is non-increasing and in [0, 1]; each interval is in [0, 1] and contains its estimate', () => {
    fc.assert(
      fc.property(obsArb, confArb, fc.double({ min: 0.5, max: 0.999, noNaN: true }), (obs, confType, level) => {
        const km = kaplanMeier(obs, { confType, level });
        let prev = 1;
        for (const s of km) {
          expect(s.survival).toBeLessThanOrEqual(prev);
          expect(s.survival).toBeGreaterThanOrEqual(0);
          expect(s.lower).toBeGreaterThanOrEqual(0);
          expect(s.upper).toBeLessThanOrEqual(1);
          expect(s.lower).toBeLessThanOrEqual(s.survival + 1e-15);
          expect(s.upper).toBeGreaterThanOrEqual(s.survival - 1e-15);
          prev = s.survival;
        }
        const m = medianSurvival(km, level);
        if (m.median !== null && m.lower !== null) expect(m.lower).toBeLessThanOrEqual(m.median);
        if (m.median !== null && m.upper !== null) expect(m.upper).toBeGreaterThanOrEqual(m.median);
        if (km.length > 0) {
          const r = restrictedMean(km, 10);
          expect(r).toBeGreaterThanOrEqual(0);
          expect(r).toBeLessThanOrEqual(10);
        }
      }),
    );
  });
  it('does not depend on input order', () => {
    fc.assert(
      fc.property(obsArb, fc.integer(), confArb, (obs, seed, confType) => {
        expect(kaplanMeier(shuffle(obs, seed), { confType })).toEqual(kaplanMeier(obs, { confType }));
      }),
    );
  });
});

describe('log-rank properties', () => {
  const groupsArb = fc.tuple(obsArb.filter((a) => a.length > 0), obsArb.filter((a) => a.length > 0), obsArb);
  it('chi-square >= 0, p in [0, 1], observed totals the events, and input order does not matter', () => {
    fc.assert(
      fc.property(groupsArb, fc.integer(), ([a, b, c], seed) => {
        const r = logRank({ a, b, c });
        expect(r.chiSquare).toBeGreaterThanOrEqual(0);
        expect(r.pValue).toBeGreaterThanOrEqual(0);
        expect(r.pValue).toBeLessThanOrEqual(1);
        const events = [...a, ...b, ...c].filter((o) => o.event).length;
        expect(r.observed.a + r.observed.b + r.observed.c).toBe(events);
        expect(r.expected.a + r.expected.b + r.expected.c).toBeCloseTo(events, 9);
        const s = logRank({ c: shuffle(c, seed), a: shuffle(a, seed + 1), b: shuffle(b, seed + 2) });
        expect(s.chiSquare).toBeCloseTo(r.chiSquare, 9);
        expect(s.df).toBe(r.df);
      }),
    );
  });
});

describe('Cox properties', () => {
  it('either fits with finite numbers or throws a clear error, and does not depend on row order', () => {
    const rowsArb = fc.array(
      fc.record({
        time: fc.integer({ min: 1, max: 12 }),
        event: fc.boolean(),
        x: fc.tuple(fc.constantFrom(0, 1), fc.integer({ min: -20, max: 20 }).map((v) => v / 10)),
      }),
      { minLength: 2, maxLength: 40 },
    );
    fc.assert(
      fc.property(rowsArb, fc.integer(), fc.constantFrom('efron' as const, 'breslow' as const), (rows, seed, ties) => {
        const input = rows.map((r) => ({ time: r.time, event: r.event, x: [...r.x] }));
        let fit: ReturnType<typeof coxPH> | null = null;
        let error: unknown = null;
        try {
          fit = coxPH(input, { ties });
        } catch (e) {
          error = e;
        }
        if (error) {
          expect((error as Error).message).toMatch(/coxPH/);
          return;
        }
        const f = fit as ReturnType<typeof coxPH>;
        for (const v of [...f.coef, ...f.se, ...f.hazardRatio, ...f.lower, ...f.upper, ...f.pValue, f.logLik, f.lrChiSquare]) {
          expect(Number.isFinite(v)).toBe(true);
        }
        const g = coxPH(shuffle(input, seed), { ties });
        g.coef.forEach((c, k) => expect(Math.abs(c - f.coef[k])).toBeLessThan(1e-6 * (1 + Math.abs(f.coef[k]))));
      }),
      { numRuns: 150 },
    );
  });
});

describe('Wilson properties', () => {
  it('the interval lies in [0, 1] and contains the estimate', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 5000 }), fc.double({ min: 0, max: 1, noNaN: true }), fc.double({ min: 0.5, max: 0.9999, noNaN: true }), (n, frac, level) => {
        const x = Math.floor(frac * n);
        const w = wilsonInterval(x, n, level);
        expect(w.lower).toBeGreaterThanOrEqual(0);
        expect(w.upper).toBeLessThanOrEqual(1);
        expect(w.lower).toBeLessThanOrEqual(w.estimate);
        expect(w.upper).toBeGreaterThanOrEqual(w.estimate);
      }),
    );
  });
});


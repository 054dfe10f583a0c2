/**
 * k-anonymity planning (lib/cohorts/k-anonymity.ts): Sweeney 2002 (every released row shares its
 * quasi-identifiers with ≥ k − 1 others), generalisation of the small classes as local recoding,
 * then suppression; distinct l-diversity (Machanavajjhala et al. 2007) reported. Counts by hand.
 */
import { describe, expect, it } from 'vitest';
import { classKey, KAnonymityCounter } from '@/lib/cohorts/k-anonymity';

function counter(k: number, rows: [string, string, string, number][]) {
  const c = new KAnonymityCounter(k);
  for (const [fine, coarse, outcome, n] of rows) for (let i = 0; i < n; i++) c.add(fine, coarse, outcome);
  return c.plan();
}

describe('KAnonymityCounter', () => {
  it('keeps classes of k or more, generalises smaller ones whose generalised class reaches k, suppresses the rest', () => {
    const plan = counter(5, [
      ['a40', 'A', 'healed', 4],
      ['a40', 'A', 'disease', 2], // a40: 6 rows, 2 outcomes → kept
      ['a41', 'B', 'healed', 3], // a41 + a42 → B holds 5 → generalised
      ['a42', 'B', 'healing', 2],
      ['a43', 'C', 'healed', 4], // C holds 4 → suppressed
    ]);
    expect(plan.decide('a40')).toBe('keep');
    expect(plan.decide('a41')).toBe('generalise');
    expect(plan.decide('a42')).toBe('generalise');
    expect(plan.decide('a43')).toBe('suppress');
    expect(plan.decide('never seen')).toBe('suppress');
    expect([plan.generalised, plan.suppressed]).toEqual([5, 4]);
    expect([plan.classes, plan.smallestClass]).toEqual([2, 5]);
    expect(plan.minL).toBe(2); // a40: healed, disease; B: healed, healing
  });
  it('a kept class does not count in its generalised class (local recoding)', () => {
    const plan = counter(3, [
      ['x1', 'X', 'healed', 10],
      ['x2', 'X', 'healed', 2], // X gets only x2's 2 rows → suppressed
    ]);
    expect(plan.decide('x2')).toBe('suppress');
    expect([plan.generalised, plan.suppressed, plan.minL]).toEqual([0, 2, 1]);
  });
  it('reports l = 0 and no classes when nothing is released', () => {
    const plan = counter(5, [['a', 'A', 'healed', 1]]);
    expect([plan.classes, plan.smallestClass, plan.minL, plan.suppressed]).toEqual([0, 0, 0, 1]);
  });
  it('k = 1 keeps every row', () => {
    const plan = counter(1, [['a', 'A', 'healed', 1]]);
    expect(plan.decide('a')).toBe('keep');
  });
  it('refuses k below 1 or not whole', () => {
    expect(() => new KAnonymityCounter(0)).toThrow();
    expect(() => new KAnonymityCounter(2.5)).toThrow();
  });
  it('classKey keeps values apart', () => {
    expect(classKey(['a', 'b'])).not.toBe(classKey(['ab', '']));
    expect(classKey(['a', null])).toBe(classKey(['a', '']));
  });
});

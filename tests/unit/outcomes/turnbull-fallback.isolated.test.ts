import { describe, expect, it, vi } from 'vitest';
import { curves, overview } from '@/lib/outcomes';
import { outcomeCase, present } from '../../support/outcome-cases';

// Turnbull's EM can fail to converge on a small group (seen on a level of the demo world's
// sealers). lib/stats then throws; the outcomes views must show Kaplan–Meier and say why, not fail.
// Here lib/stats' turnbull is made to fail on groups of one tooth, as the real one did on that level.
vi.mock('@/lib/stats', async (importOriginal) => {
  const real = await importOriginal<typeof import('@/lib/stats')>();
  return {
    ...real,
    turnbull: (intervals: Parameters<typeof real.turnbull>[0]) => {
      if (intervals.length === 1) throw new Error('turnbull did not converge in 200000 EM steps (largest Kuhn–Tucker violation above 1e-7)');
      return real.turnbull(intervals);
    },
  };
});

const kase = (id: string, sealerClass: string, pai: number) => outcomeCase({ id, sealerClass, reviews: [present(400, pai)] });

describe('Turnbull that does not converge', () => {
  const rows = [kase('a', 'epoxy_resin', 1), kase('b', 'epoxy_resin', 4), kase('c', 'calcium_silicate', 4)];

  it('curves per level fall back to Kaplan–Meier for every level and say so', () => {
    const c = curves(rows, rows, { endpoint: 'healing', method: 'turnbull', factor: 'sealer', minObs: 365 });
    expect(c).toMatchObject({ asked: 'turnbull', method: 'km', turnbullFailed: true });
    expect(c.curves.map((cv) => [cv.level, cv.n, cv.points[0]!.lower])).toEqual([
      ['Epoxy resin', 2, 1],
      ['Calcium silicate (bioceramic)', 1, 1],
    ]);
    const together = curves(rows, rows, { endpoint: 'healing', method: 'turnbull', factor: null, minObs: 365 });
    expect(together).toMatchObject({ method: 'turnbull', turnbullFailed: false });
  });

  it('the overview leaves Turnbull out instead of failing', () => {
    const o = overview(rows.slice(2), rows, '2026-01-01', 365);
    expect(o.teeth).toBe(1);
    expect(o.turnbullComputed).toBe(false);
    expect(o.survival.every((s) => s.turnbull === null)).toBe(true);
  });
});

/**
 * Seeded data sets for the reference-conformance suite and the benchmark:
 * survival times with ties (times rounded to a grid) and random censoring,
 * a group label and two covariates (x1 binary, x2 continuous).
 */

import { createRandom } from '../../lib/demo/random';

/** Uniform [0, 1) numbers from a seed: Lamina's one seeded generator (Mulberry32, lib/demo/random.ts). */
export function prng(seed: number): () => number {
  return createRandom(seed).next;
}

export interface Row {
  time: number;
  event: boolean;
  group: string;
  x1: number;
  x2: number;
}

export interface GenOptions {
  n: number;
  seed: number;
  groups: number;
  /** times are rounded up to a multiple of this (creates ties) */
  grid: number;
  /** mean of the event-time distribution in the baseline group */
  scale: number;
  /** censoring times are uniform on (0, censorMax) */
  censorMax: number;
}

export function generate(o: GenOptions): Row[] {
  const rnd = prng(o.seed);
  const rows: Row[] = [];
  for (let i = 0; i < o.n; i++) {
    const g = Math.floor(rnd() * o.groups);
    const x1 = rnd() < 0.4 ? 1 : 0;
    // Box–Muller for x2, rounded to 2 decimals
    const u1 = Math.max(rnd(), 1e-12);
    const u2 = rnd();
    const x2 = Math.round(Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2) * 100) / 100;
    const lp = 0.5 * x1 - 0.3 * x2 + 0.25 * g;
    const tEvent = (-Math.log(Math.max(rnd(), 1e-12)) * o.scale) / Math.exp(lp);
    const tCens = rnd() * o.censorMax;
    const event = tEvent <= tCens;
    const raw = Math.min(tEvent, tCens);
    const time = Math.max(1, Math.ceil(raw / o.grid)) * o.grid;
    rows.push({ time: Math.round(time * 1e6) / 1e6, event, group: `g${g + 1}`, x1, x2 });
  }
  return rows;
}

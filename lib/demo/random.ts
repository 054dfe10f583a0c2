/**
 * A small seeded pseudo-random generator for the demo world, so the same seed and `today` give
 * the same world on every machine. Mulberry32 (a public-domain 32-bit generator): plenty for
 * invented demo data, not for anything that needs to be unpredictable.
 */

export interface Random {
  /** Uniform in [0, 1). */
  next(): number;
  /** Whole number in [min, max], both ends included. */
  int(min: number, max: number): number;
  /** Uniform in [min, max). */
  between(min: number, max: number): number;
  chance(p: number): boolean;
  pick<T>(items: readonly T[]): T;
  /** Picks by weight; weights need not sum to 1. */
  weighted<T>(entries: readonly (readonly [T, number])[]): T;
  /** Normal by Box–Muller. */
  normal(mean: number, sd: number): number;
}

export function createRandom(seed: number): Random {
  let state = seed >>> 0;
  const next = () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const random: Random = {
    next,
    int: (min, max) => min + Math.floor(next() * (max - min + 1)),
    between: (min, max) => min + next() * (max - min),
    chance: (p) => next() < p,
    pick: (items) => {
      if (items.length === 0) throw new RangeError('pick from an empty list');
      return items[Math.floor(next() * items.length)]!;
    },
    weighted: (entries) => {
      const total = entries.reduce((s, [, w]) => s + w, 0);
      let x = next() * total;
      for (const [value, w] of entries) {
        x -= w;
        if (x < 0) return value;
      }
      return entries[entries.length - 1]![0];
    },
    normal: (mean, sd) => {
      const u = 1 - next();
      const v = next();
      return mean + sd * Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
    },
  };
  return random;
}

/** Rounds to the nearest multiple of `step` (0.5 → 0.5 mm), without float noise. */
export function roundTo(value: number, step: number): number {
  const decimals = String(step).split('.')[1]?.length ?? 0;
  return Number((Math.round(value / step) * step).toFixed(decimals));
}

export function clamp(value: number, min: number, max: number): number {
  return Math.min(max, Math.max(min, value));
}

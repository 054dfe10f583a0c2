/**
 * Weighted kappa with its 95% interval (lib/stats cohenKappaInterval) against statsmodels'
 * `cohens_kappa(table, wt=...)` (statsmodels.stats.inter_rater; Fleiss, Cohen & Everitt 1969
 * large-sample variance; Debian python3-statsmodels under /usr/bin/python3). Fails, not skips,
 * when statsmodels is missing. Tables are on the full PAI scale 1–5 (a score nobody used keeps
 * its row and column, as Lamina computes it).
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { cohenKappaInterval } from '@/lib/stats';
import { createRandom } from '@/lib/demo/random';

const HERE = fileURLToPath(new URL('./scripts', import.meta.url));
const PYTHON = '/usr/bin/python3';
const SCALE = [1, 2, 3, 4, 5] as const;

type Pair = [number, number];

/** Invented paired PAI readings: the second reader within a step of the first most of the time. */
function readings(seed: number, n: number, spread: number): Pair[] {
  const rnd = createRandom(seed).next;
  const out: Pair[] = [];
  for (let i = 0; i < n; i++) {
    const a = 1 + Math.floor(rnd() * 5);
    const step = rnd() < spread ? (rnd() < 0.5 ? -1 : 1) * (rnd() < 0.3 ? 2 : 1) : 0;
    out.push([a, Math.min(5, Math.max(1, a + step))]);
  }
  return out;
}

function tableOf(pairs: Pair[]): number[][] {
  const t = SCALE.map(() => SCALE.map(() => 0));
  for (const [a, b] of pairs) t[a - 1]![b - 1]! += 1;
  return t;
}

const CASES: { name: string; pairs: Pair[] }[] = [
  { name: 'close readers, 80 films', pairs: readings(13, 80, 0.3) },
  { name: 'loose readers, 40 films', pairs: readings(17, 40, 0.7) },
  // no score 5 used by either reader: the full scale still sets the weights
  { name: 'scores 1–4 only, 25 films', pairs: readings(19, 25, 0.4).map(([a, b]) => [Math.min(a, 4), Math.min(b, 4)] as Pair) },
  { name: 'hand-written, 10 films', pairs: [[1, 1], [2, 2], [3, 4], [4, 4], [5, 3], [2, 1], [3, 3], [4, 5], [1, 2], [5, 5]] },
];
const WEIGHTS = [null, 'linear', 'quadratic'] as const;

describe('weighted kappa with 95% interval vs statsmodels cohens_kappa (Fleiss, Cohen & Everitt 1969)', () => {
  const py = spawnSync(PYTHON, ['-c', 'import statsmodels; print("ok")'], { encoding: 'utf8' });
  it('has statsmodels under /usr/bin/python3', () => {
    expect(py.stdout?.trim(), 'Reference needs python3-statsmodels under /usr/bin/python3 (apt-get install python3-statsmodels)').toBe('ok');
  });

  const dir = mkdtempSync(path.join(tmpdir(), 'lamina-kappa-ci-'));
  const input = CASES.flatMap((c) => WEIGHTS.map((wt) => ({ table: tableOf(c.pairs), wt })));
  let reference: { version: string; results: { kappa: number; se: number; lower: number; upper: number }[] } | null = null;
  if (py.stdout?.trim() === 'ok') {
    writeFileSync(path.join(dir, 'in.json'), JSON.stringify(input));
    execFileSync(PYTHON, [path.join(HERE, 'kappa-ci-reference.py'), path.join(dir, 'in.json'), path.join(dir, 'out.json')], { stdio: ['ignore', 'ignore', 'pipe'] });
    reference = JSON.parse(readFileSync(path.join(dir, 'out.json'), 'utf8'));
  }
  rmSync(dir, { recursive: true, force: true });

  CASES.forEach((c, ci) => {
    WEIGHTS.forEach((wt, wi) => {
      it(`${c.name}, ${wt ?? 'unweighted'}: kappa, SE and interval equal statsmodels'`, () => {
        expect(reference, 'statsmodels reference did not run').not.toBeNull();
        const ref = reference!.results[ci * WEIGHTS.length + wi]!;
        const ours = cohenKappaInterval(c.pairs, { weights: wt ?? 'none', scale: SCALE });
        // source: statsmodels cohens_kappa (KappaResults.kappa, std_kappa, kappa_low, kappa_upp)
        expect(ours.kappa).toBeCloseTo(ref.kappa, 10);
        expect(ours.se).toBeCloseTo(ref.se, 10);
        expect(ours.lower).toBeCloseTo(ref.lower, 10);
        expect(ours.upper).toBeCloseTo(ref.upper, 10);
      });
    });
  });
});

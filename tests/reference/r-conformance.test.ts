/**
 * Reference conformance: every function in lib/stats against R (survival's
 * survfit, survdiff, coxph; stats' prop.test, chisq.test, fisher.test) and
 * scikit-learn's cohen_kappa_score, on seeded data sets with ties and
 * censoring, to 1e-6 relative (plus 1e-12 absolute, for values that are 0).
 *
 * R and scikit-learn must be installed (scripts/test.sh installs Debian's
 * r-base-core, r-cran-survival and python3-sklearn). If they are missing the
 * suite FAILS with a message saying so; it never skips.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  chiSquareTest,
  cohenKappa,
  coxPH,
  fisherExact2x2,
  kaplanMeier,
  logRank,
  medianSurvival,
  restrictedMean,
  restrictedMeanInterval,
  wilsonInterval,
  type ConfType,
  type SurvivalObservation,
} from '@/lib/stats';
import { generate, prng, type Row } from './datasets';

const HERE = fileURLToPath(new URL('./scripts', import.meta.url));
const REL = 1e-6;
const ABS = 1e-12;
const PYTHON = '/usr/bin/python3';

function close(actual: number | null, expected: number | null, what: string): void {
  if (expected === null || actual === null) {
    expect(actual, what).toBe(expected);
    return;
  }
  const ok = Math.abs(actual - expected) <= REL * Math.abs(expected) + ABS;
  if (!ok) expect.fail(`${what}: Lamina ${actual} vs reference ${expected} (relative difference ${Math.abs(actual - expected) / Math.abs(expected)})`);
}

function closeAll(actual: readonly (number | null)[], expected: readonly (number | null)[], what: string): void {
  expect(actual.length, `${what}: length`).toBe(expected.length);
  actual.forEach((a, i) => close(a, expected[i], `${what}[${i}]`));
}

// ---------- data ----------
const datasets: Record<string, Row[]> = {
  // heavy ties: integer times 1..8
  tiny: generate({ n: 25, seed: 11, groups: 2, grid: 1, scale: 4, censorMax: 10 }),
  // weekly grid, 3 groups
  medium: generate({ n: 300, seed: 12, groups: 3, grid: 1, scale: 20, censorMax: 60 }),
  // fine grid, 4 groups, 40% or so censored
  large: generate({ n: 2000, seed: 13, groups: 4, grid: 0.1, scale: 15, censorMax: 30 }),
  // large enough for the radix-sort paths (2,048 keys and more per sorted list)
  big: generate({ n: 24000, seed: 17, groups: 4, grid: 0.01, scale: 300, censorMax: 900 }),
  // coarse grid: very many ties per time, for Efron vs Breslow
  coarse: generate({ n: 500, seed: 14, groups: 2, grid: 5, scale: 20, censorMax: 50 }),
  // no censoring: the curve falls to 0
  uncensored: generate({ n: 40, seed: 15, groups: 2, grid: 1, scale: 10, censorMax: 1e9 }),
  // the curve sits exactly at 0.5 and later drops: R takes the midpoint for the median
  flat: [
    { time: 1, event: true, group: 'a', x1: 0, x2: 0.3 },
    { time: 2, event: true, group: 'b', x1: 1, x2: -0.2 },
    { time: 3, event: false, group: 'a', x1: 1, x2: 1.1 },
    { time: 4, event: true, group: 'b', x1: 0, x2: 0.4 },
  ],
  // every observation censored
  allCensored: generate({ n: 12, seed: 16, groups: 2, grid: 1, scale: 1e9, censorMax: 20 }),
};

const obsOf = (rows: Row[]): SurvivalObservation[] => rows.map((r) => ({ time: r.time, event: r.event }));

const kmRuns: { id: string; conf: ConfType; level: number; tau: number }[] = [];
for (const id of Object.keys(datasets)) {
  for (const conf of ['log', 'log-log', 'plain'] as const) {
    for (const level of [0.95, 0.9]) {
      const maxT = Math.max(...datasets[id].map((r) => r.time));
      kmRuns.push({ id, conf, level, tau: Math.round(maxT * 0.7 * 10) / 10 });
    }
  }
}
const lrIds = ['tiny', 'medium', 'large', 'big', 'coarse', 'uncensored'];
const coxRuns = ['medium', 'large', 'big', 'coarse', 'uncensored'].flatMap((id) => [
  { id, ties: 'efron' as const },
  { id, ties: 'breslow' as const },
]);
const props = [
  { x: 81, n: 263, level: 0.95 },
  { x: 0, n: 10, level: 0.95 },
  { x: 10, n: 10, level: 0.95 },
  { x: 1, n: 29, level: 0.9 },
  { x: 15, n: 148, level: 0.99 },
  { x: 532, n: 1021, level: 0.95 },
];
const tables: Record<string, number[][]> = {
  t2x2: [
    [12, 5],
    [7, 19],
  ],
  t2x3: [
    [3, 9, 14],
    [11, 4, 2],
  ],
  t4x3: [
    [20, 5, 3],
    [9, 12, 4],
    [2, 7, 15],
    [1, 1, 6],
  ],
  big: [
    [420, 180],
    [260, 340],
  ],
};
const fisherTables: [[number, number], [number, number]][] = [
  [
    [3, 1],
    [1, 3],
  ],
  [
    [10, 2],
    [3, 15],
  ],
  [
    [0, 5],
    [6, 1],
  ],
  [
    [1, 9],
    [11, 3],
  ],
  [
    [25, 40],
    [31, 18],
  ],
  [
    [7, 0],
    [0, 7],
  ],
];

function kappaCases() {
  const rnd = prng(21);
  const cases: { a: number[]; b: number[]; weights: null | 'linear' | 'quadratic'; labels: number[] | null }[] = [];
  for (const n of [20, 150]) {
    const a: number[] = [];
    const b: number[] = [];
    for (let i = 0; i < n; i++) {
      const s = 1 + Math.floor(rnd() * 5);
      const noise = rnd() < 0.6 ? 0 : rnd() < 0.5 ? -1 : 1;
      a.push(s);
      b.push(Math.min(5, Math.max(1, s + noise)));
    }
    for (const weights of [null, 'linear', 'quadratic'] as const) {
      cases.push({ a, b, weights, labels: null });
      cases.push({ a, b, weights, labels: [1, 2, 3, 4, 5, 6] });
    }
  }
  return cases;
}
const kappas = kappaCases();

// ---------- run the references ----------
interface RJson {
  version: string;
  km: {
    id: string;
    conf: ConfType;
    level: number[];
    tau: number[];
    time: number[];
    nRisk: number[];
    nEvent: number[];
    nCensor: number[];
    survival: number[];
    lower: (number | null)[];
    upper: (number | null)[];
    median: (number | null)[];
    medianLower: (number | null)[];
    medianUpper: (number | null)[];
    rmean: number[];
    /** survival:::survmean's se(rmean) (the se print(survfit, rmean = tau) shows) */
    rmeanSe: number[];
  }[];
  logRank: { id: string; groups: string[]; observed: number[]; expected: number[]; chiSquare: number[]; df: number[]; pValue: number[] }[];
  cox: {
    id: string;
    ties: 'efron' | 'breslow';
    coef: number[];
    se: number[];
    hazardRatio: number[];
    lower: number[];
    upper: number[];
    pValue: number[];
    logLik: number[];
    lrChiSquare: number[];
  }[];
  wilson: { x: number[]; n: number[]; level: number[]; estimate: number[]; lower: number[]; upper: number[] }[];
  chiSquare: { id: string; chiSquare: number[]; df: number[]; pValue: number[] }[];
  fisher: { table: number[]; pValue: number[] }[];
}

let dir = '';
let R: RJson;
let SK: { version: string; results: { kappa: number }[] };

function csv(name: string, header: string[], rows: (string | number)[][]): void {
  writeFileSync(path.join(dir, name), [header.join(','), ...rows.map((r) => r.map(String).join(','))].join('\n') + '\n');
}

let setupError: Error | null = null;

/** Every comparison calls this first, so a missing R or scikit-learn fails each test (never skips). */
function ready(): void {
  if (setupError) throw setupError;
}

function runReferences(): void {
  const r = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages(library(survival)); cat("ok")'], { encoding: 'utf8' });
  if (r.error || r.status !== 0 || !r.stdout.includes('ok')) {
    throw new Error(
      'Reference suite needs R with the survival package (Debian: apt-get install r-base-core r-cran-survival; scripts/test.sh installs them). ' +
        `Rscript failed: ${r.error ? r.error.message : r.stderr}`,
    );
  }
  const py = spawnSync(PYTHON, ['-c', 'import sklearn; print("ok")'], { encoding: 'utf8' });
  if (py.error || py.status !== 0 || !py.stdout.includes('ok')) {
    throw new Error(
      `Reference suite needs scikit-learn under ${PYTHON} (Debian: apt-get install python3-sklearn; scripts/test.sh installs it). ` +
        `It failed: ${py.error ? py.error.message : py.stderr}`,
    );
  }
  dir = mkdtempSync(path.join(tmpdir(), 'lamina-ref-'));
  const dataRows: (string | number)[][] = [];
  for (const [id, rows] of Object.entries(datasets)) {
    for (const r of rows) dataRows.push([id, r.time, r.event ? 1 : 0, r.group, r.x1, r.x2]);
  }
  csv('datasets.csv', ['id', 'time', 'status', 'grp', 'x1', 'x2'], dataRows);
  csv('km.csv', ['id', 'conf', 'level', 'tau'], kmRuns.map((k) => [k.id, k.conf, k.level, k.tau]));
  csv('groups.csv', ['id'], lrIds.map((id) => [id]));
  csv('cox.csv', ['id', 'ties'], coxRuns.map((c) => [c.id, c.ties]));
  csv('props.csv', ['x', 'n', 'level'], props.map((p) => [p.x, p.n, p.level]));
  const tabRows: (string | number)[][] = [];
  for (const [id, t] of Object.entries(tables)) t.forEach((row, i) => row.forEach((v, j) => tabRows.push([id, i + 1, j + 1, v])));
  csv('tables.csv', ['id', 'row', 'col', 'count'], tabRows);
  csv('fisher.csv', ['a', 'b', 'c', 'd'], fisherTables.map(([[a, b], [c, d]]) => [a, b, c, d]));
  execFileSync('Rscript', [path.join(HERE, 'survival-reference.R'), dir], { stdio: ['ignore', 'ignore', 'pipe'] });
  R = JSON.parse(readFileSync(path.join(dir, 'r.json'), 'utf8')) as RJson;
  writeFileSync(path.join(dir, 'kappa-in.json'), JSON.stringify(kappas));
  execFileSync(PYTHON, [path.join(HERE, 'kappa-reference.py'), path.join(dir, 'kappa-in.json'), path.join(dir, 'kappa-out.json')], {
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  SK = JSON.parse(readFileSync(path.join(dir, 'kappa-out.json'), 'utf8')) as typeof SK;
}

beforeAll(() => {
  try {
    runReferences();
  } catch (e) {
    setupError = e instanceof Error ? e : new Error(String(e));
  }
}, 120_000);

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

// ---------- comparisons ----------
describe('kaplanMeier, medianSurvival, restrictedMean vs R survfit', () => {
  it.each(kmRuns.map((k, i) => [`${k.id} ${k.conf} ${k.level}`, i] as const))('%s', (_label, i) => {
    ready();
    const ref = R.km[i];
    const run = kmRuns[i];
    expect(ref.id).toBe(run.id);
    const steps = kaplanMeier(obsOf(datasets[run.id]), { confType: run.conf, level: run.level });
    closeAll(steps.map((s) => s.time), ref.time, 'time');
    closeAll(steps.map((s) => s.nRisk), ref.nRisk, 'nRisk');
    closeAll(steps.map((s) => s.nEvent), ref.nEvent, 'nEvent');
    closeAll(steps.map((s) => s.nCensor), ref.nCensor, 'nCensor');
    closeAll(steps.map((s) => s.survival), ref.survival, 'survival');
    // Where R gives NA (bound undefined at S = 0, or S = 1 on the log-log scale) Lamina gives the estimate.
    closeAll(steps.map((s) => s.lower), ref.lower.map((v, k) => v ?? ref.survival[k]), 'lower');
    closeAll(steps.map((s) => s.upper), ref.upper.map((v, k) => v ?? ref.survival[k]), 'upper');
    const med = medianSurvival(steps, run.level);
    close(med.median, ref.median[0], 'median');
    close(med.lower, ref.medianLower[0], 'median lower');
    close(med.upper, ref.medianUpper[0], 'median upper');
    close(restrictedMean(steps, run.tau), ref.rmean[0], 'restricted mean');
    // R survival: print(survfit, rmean = tau) / survival:::survmean, column se(rmean)
    const rmst = restrictedMeanInterval(steps, run.tau, run.level);
    close(rmst.mean, ref.rmean[0], 'restricted mean (with interval)');
    close(rmst.se, ref.rmeanSe[0], 'restricted mean se');
  });
});

describe('logRank vs R survdiff', () => {
  it.each(lrIds.map((id, i) => [id, i] as const))('%s', (id, i) => {
    ready();
    const ref = R.logRank[i];
    const groups: Record<string, SurvivalObservation[]> = {};
    for (const r of datasets[id]) (groups[r.group] ??= []).push({ time: r.time, event: r.event });
    const res = logRank(groups);
    ref.groups.forEach((g, k) => {
      close(res.observed[g], ref.observed[k], `observed ${g}`);
      close(res.expected[g], ref.expected[k], `expected ${g}`);
    });
    close(res.chiSquare, ref.chiSquare[0], 'chi-square');
    expect(res.df).toBe(ref.df[0]);
    close(res.pValue, ref.pValue[0], 'p-value');
  });
});

describe('coxPH vs R coxph', () => {
  it.each(coxRuns.map((c, i) => [`${c.id} ${c.ties}`, i] as const))('%s', (_label, i) => {
    ready();
    const ref = R.cox[i];
    const run = coxRuns[i];
    const res = coxPH(
      datasets[run.id].map((r) => ({ time: r.time, event: r.event, x: [r.x1, r.x2] })),
      { ties: run.ties },
    );
    closeAll(res.coef, ref.coef, 'coef');
    closeAll(res.se, ref.se, 'se');
    closeAll(res.hazardRatio, ref.hazardRatio, 'hazard ratio');
    closeAll(res.lower, ref.lower, 'lower');
    closeAll(res.upper, ref.upper, 'upper');
    closeAll(res.pValue, ref.pValue, 'p-value');
    close(res.logLik, ref.logLik[0], 'log-likelihood');
    close(res.lrChiSquare, ref.lrChiSquare[0], 'LR chi-square');
  });
});

describe('wilsonInterval vs R prop.test(correct = FALSE)', () => {
  it.each(props.map((p, i) => [`${p.x}/${p.n} at ${p.level}`, i] as const))('%s', (_label, i) => {
    ready();
    const p = props[i];
    const ref = R.wilson[i];
    const w = wilsonInterval(p.x, p.n, p.level);
    close(w.estimate, ref.estimate[0], 'estimate');
    close(w.lower, ref.lower[0], 'lower');
    close(w.upper, ref.upper[0], 'upper');
  });
});

describe('chiSquareTest vs R chisq.test(correct = FALSE)', () => {
  it.each(Object.keys(tables).map((id, i) => [id, i] as const))('%s', (id, i) => {
    ready();
    const ref = R.chiSquare[i];
    const res = chiSquareTest(tables[id]);
    close(res.chiSquare, ref.chiSquare[0], 'chi-square');
    expect(res.df).toBe(ref.df[0]);
    close(res.pValue, ref.pValue[0], 'p-value');
  });
});

describe('fisherExact2x2 vs R fisher.test', () => {
  it.each(fisherTables.map((t, i) => [JSON.stringify(t), i] as const))('%s', (_label, i) => {
    ready();
    close(fisherExact2x2(fisherTables[i]).pValue, R.fisher[i].pValue[0], 'p-value');
  });
});

describe('cohenKappa vs scikit-learn cohen_kappa_score', () => {
  it.each(kappas.map((c, i) => [`n=${c.a.length} weights=${c.weights} labels=${c.labels ? 'given' : 'default'}`, i] as const))(
    '%s',
    (_label, i) => {
      ready();
      const c = kappas[i];
      const res = cohenKappa(
        c.a.map((v, k) => [v, c.b[k]] as [number, number]),
        { weights: c.weights ?? 'none', categories: c.labels ?? undefined },
      );
      close(res.kappa, SK.results[i].kappa, 'kappa');
    },
  );
});

describe('reference tools', () => {
  it('R (survival) and scikit-learn are installed and report their versions', () => {
    ready();
    expect(R.version).toMatch(/survival/);
    expect(SK.version).toMatch(/scikit-learn/);
  });
});

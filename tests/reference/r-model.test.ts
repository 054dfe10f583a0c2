/**
 * Reference conformance of the outcomes area's multivariable models (issue 12, item 4;
 * lib/outcomes/model.ts) against R on a fixed, invented data set of 300 treated teeth of
 * about 150 patients (seeded, tests/reference/datasets.ts prng):
 * - the Cox model against R survival's coxph(Surv(time, event) ~ …, ties = "efron",
 *   cluster = patient): hazard ratios, robust standard errors, Wald intervals and p-values;
 * - the logistic model against R's glm(y ~ …, family = binomial) with sandwich::vcovCL(fit,
 *   cluster = ~patient, type = "HC1"): odds ratios, robust standard errors, intervals, p-values.
 * R builds its own design matrix from the raw factor columns, with each factor's reference level
 * chosen by R as its most frequent one (relevel on which.max(table)), so the check covers Lamina's
 * design matrix and reference levels too. The times and outcomes given to R are worked out here
 * from the data set's own definition (failure found at a review: the midpoint of the last clear
 * review and that review), not from Lamina. To 1e-6 relative (plus 1e-12 absolute).
 *
 * R with survival and sandwich must be installed (scripts/test.sh installs them); if not, every
 * test FAILS; none skips.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { FACTORS, healingObservations, outcomeAtMilestone, type OutcomeCase } from '@/lib/outcomes';
import { coxModel, logisticModel, type CovariateChoice, type ModelFit } from '@/lib/outcomes/model';
import type { RecordedReview } from '@/lib/scoring';
import { outcomeCase, review } from '../support/outcome-cases';
import { prng } from './datasets';

const HERE = fileURLToPath(new URL('./scripts', import.meta.url));
const REL = 1e-6;
const ABS = 1e-12;
const DONE = '2019-03-01';

interface Truth {
  time: number;
  event: boolean;
  /** strict success at 12 months; null when not seen then */
  y: boolean | null;
}

/** The data set: invented teeth with visit-detected failures (a retreatment found at a review). */
function dataset(): { cases: OutcomeCase[]; truth: Truth[] } {
  const rnd = prng(1204);
  const cases: OutcomeCase[] = [];
  const truth: Truth[] = [];
  let patient = 0;
  while (cases.length < 300) {
    const teeth = 1 + Math.floor(rnd() * 3);
    patient += 1;
    for (let k = 0; k < teeth && cases.length < 300; k++) {
      const retreat = rnd() < 0.3;
      const u = rnd();
      const lesion = u < 0.4 ? 0 : u < 0.7 ? Math.round((0.5 + rnd() * 4.4) * 10) / 10 : u < 0.88 ? Math.round((5 + rnd() * 4.9) * 10) / 10 : Math.round((10 + rnd() * 6) * 10) / 10;
      const pai = lesion === 0 ? 1 + Math.floor(rnd() * 2) : 3 + Math.floor(rnd() * 3);
      const g = rnd();
      const group = g < 0.45 ? 'molar' : g < 0.8 ? 'premolar' : 'incisor';
      const hazard = (1 / 1400) * Math.exp(0.6 * (retreat ? 1 : 0) + 0.08 * lesion + 0.2 * (pai - 3) + (group === 'molar' ? 0.3 : 0));
      const t = -Math.log(Math.max(rnd(), 1e-12)) / hazard;
      const end = 200 + Math.floor(rnd() * 1600);
      const days = [180, 365 + Math.floor(rnd() * 40), 730 + Math.floor(rnd() * 60), 1095 + Math.floor(rnd() * 60), 1460 + Math.floor(rnd() * 60)].filter((d) => d <= end);
      const reviews: RecordedReview[] = [];
      let last = 0;
      let event = false;
      for (const d of days) {
        if (d >= t) {
          reviews.push(review(d, 'retreated', { paiScore: null, from: DONE }));
          event = true;
          break;
        }
        reviews.push(review(d, 'present', { paiScore: 1, from: DONE }));
        last = d;
      }
      const failedAt = event ? Number(days[reviews.length - 1]) : null;
      // seen at 12 months: the review at 365–404 days (inside ± 91 days), or a failure found by then
      const twelve = days.find((d) => d >= 274 && d <= 456);
      const y = failedAt !== null && failedAt <= 456 ? false : twelve !== undefined ? true : null;
      truth.push({ time: failedAt !== null ? (last + failedAt) / 2 : last, event, y });
      cases.push(
        outcomeCase({
          id: `c${cases.length}`,
          patientId: `p${patient}`,
          kind: retreat ? 'nonsurgical_retreatment' : 'primary_treatment',
          completionDate: DONE,
          baselinePai: pai,
          lesionDiameterMm: lesion,
          toothGroup: group,
          reviews,
        }),
      );
    }
  }
  return { cases, truth };
}

const { cases, truth } = dataset();
const RUNS: { id: string; terms: string; choices: CovariateChoice[] }[] = [
  { id: 'bands', terms: 'kind+lesion+pai', choices: [{ key: 'kind' }, { key: 'lesion' }, { key: 'pai', numeric: true }] },
  { id: 'numeric', terms: 'kind+lesion_mm+paiLevel+group', choices: [{ key: 'kind' }, { key: 'lesion', numeric: true }, { key: 'pai' }, { key: 'group' }] },
];
/** R's coefficient name of a model term: the column name, then the level for a factor. */
const rName = (t: ModelFit['terms'][number]) =>
  t.numeric ? (t.covariate === 'lesion' ? 'lesion_mm' : 'pai') : `${({ kind: 'kind', lesion: 'lesion', group: 'group', pai: 'paiLevel' } as Record<string, string>)[t.covariate]}${t.term}`;

interface RFit {
  names: string[];
  coef: number[];
  robustSe: number[];
  lower: number[];
  upper: number[];
  p: number[];
}
let R: { version: string; runs: { run: string; cox: RFit & { hr: number[]; n: number; events: number }; logistic: RFit & { or: number[]; n: number } }[] };
let dir = '';
let setupError: Error | null = null;
const largest: Record<string, number> = {};

beforeAll(() => {
  try {
    const r = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages({library(survival); library(sandwich)}); cat("ok")'], { encoding: 'utf8' });
    if (r.error || r.status !== 0 || !r.stdout.includes('ok')) {
      throw new Error(`This suite needs R with survival and sandwich (Debian: apt-get install r-base-core r-cran-survival r-cran-sandwich; scripts/test.sh installs them). Rscript failed: ${r.error ? r.error.message : r.stderr}`);
    }
    dir = mkdtempSync(path.join(tmpdir(), 'lamina-ref-model-'));
    const lines = ['run,time,event,y,patient,kind,lesion,lesion_mm,pai,group'];
    for (const run of RUNS)
      cases.forEach((c, i) => {
        const t = truth[i]!;
        if (t.time === 0 && !t.event) return; // no review: not in the Cox model (nor seen at 12 months)
        lines.push([run.id, t.time, t.event ? 1 : 0, t.y === null ? 'NA' : t.y ? 1 : 0, c.patientId, FACTORS.kind.level(c), FACTORS.lesion.level(c), c.lesionDiameterMm, c.baselinePai, FACTORS.group.level(c)].join(','));
      });
    writeFileSync(path.join(dir, 'rows.csv'), lines.join('\n') + '\n');
    writeFileSync(path.join(dir, 'runs.csv'), ['run,terms', ...RUNS.map((r) => `${r.id},${r.terms}`)].join('\n') + '\n');
    execFileSync('Rscript', [path.join(HERE, 'model-reference.R'), dir], { stdio: ['ignore', 'ignore', 'pipe'] });
    R = JSON.parse(readFileSync(path.join(dir, 'r.json'), 'utf8')) as typeof R;
  } catch (e) {
    setupError = e instanceof Error ? e : new Error(String(e));
  }
}, 120_000);

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
  console.log(`Largest relative differences from R (multivariable models):\n${Object.entries(largest).map(([k, v]) => `  ${k}: ${v.toExponential(2)}`).join('\n')}`);
});

function close(what: string, actual: number, expected: number | undefined): void {
  if (expected === undefined) expect.fail(`${what}: R has no such value`);
  const d = Math.abs(actual - expected);
  largest[what.split(' ')[0]!] = Math.max(largest[what.split(' ')[0]!] ?? 0, expected === 0 ? d : d / Math.abs(expected));
  if (!(d <= REL * Math.abs(expected) + ABS)) expect.fail(`${what}: Lamina ${actual} vs R ${expected}`);
}

function compare(kind: 'cox' | 'logistic', fit: ModelFit, ref: RFit & { hr?: number[]; or?: number[] }): void {
  expect(fit.error).toBeNull();
  expect(fit.notes, 'no level merged or left out in this data set').toEqual([]);
  // the same terms (so the same reference levels), in any order
  expect(fit.terms.map(rName).sort()).toEqual([...ref.names].sort());
  for (const t of fit.terms) {
    const k = ref.names.indexOf(rName(t));
    close(`${kind}.coef ${rName(t)}`, t.coef, ref.coef[k]);
    close(`${kind}.robustSe ${rName(t)}`, t.robustSe!, ref.robustSe[k]);
    close(`${kind}.ratio ${rName(t)}`, t.ratio, (ref.hr ?? ref.or)![k]);
    close(`${kind}.lower ${rName(t)}`, t.lower, ref.lower[k]);
    close(`${kind}.upper ${rName(t)}`, t.upper, ref.upper[k]);
    close(`${kind}.p ${rName(t)}`, t.pValue, ref.p[k]);
  }
}

describe('the data set', () => {
  it('Lamina’s healing intervals and 12-month outcomes give the times and outcomes worked out here', () => {
    const ints = healingObservations(cases, 365);
    cases.forEach((c, i) => {
      const t = truth[i]!;
      const iv = ints[i]!;
      expect(iv.right === null ? iv.left : (iv.left + iv.right) / 2).toBe(t.time);
      expect(iv.right !== null).toBe(t.event);
      const o = outcomeAtMilestone(c, 12, 365);
      expect(o === null ? null : o === 'healed').toBe(t.y);
    });
    expect(truth.filter((t) => t.event).length).toBeGreaterThan(60);
  });
});

describe.each(RUNS.map((r, i) => [r.id, i] as const))('run %s', (_id, i) => {
  const run = RUNS[i]!;
  it(`Cox: coxph(Surv(time, event) ~ ${run.terms}, ties = "efron", cluster = patient)`, () => {
    if (setupError) throw setupError;
    const ref = R.runs[i]!;
    expect(ref.run).toBe(run.id);
    const fit = coxModel(cases, cases, run.choices, { endpoint: 'healing', minObs: 365 });
    expect([fit.cases, fit.events]).toEqual([ref.cox.n, ref.cox.events]);
    compare('cox', fit, ref.cox);
  });
  it(`logistic: glm(y ~ ${run.terms}, binomial) with sandwich::vcovCL(cluster = ~patient, type = "HC1")`, () => {
    if (setupError) throw setupError;
    const ref = R.runs[i]!;
    const fit = logisticModel(cases, run.choices, { minObs: 365 });
    expect(fit.cases).toBe(ref.logistic.n);
    compare('logistic', fit, ref.logistic);
  });
});

describe('reference tools', () => {
  it('R, survival and sandwich report their versions', () => {
    if (setupError) throw setupError;
    expect(R.version).toMatch(/survival .* sandwich/);
  });
});

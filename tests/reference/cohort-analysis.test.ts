/**
 * The research export's analysis scripts (issue 14), run on an export of invented rows
 * (lib/demo/cohort-rows.ts) and compared with Lamina's own estimates on the same rows:
 * - analysis.R with Debian's R and survival (Therneau, survival package; R's survfit and coxph):
 *   Kaplan–Meier survival and its log-scale 95% interval at 365, 731 and 1461 days for both
 *   endpoints against lib/stats kaplanMeier, and the Cox model coxph(Surv(healing_time,
 *   healing_event) ~ kind + arch + cluster(patient_id), ties = "efron") — coefficients and robust
 *   (Lin & Wei 1989) standard errors — against lib/stats coxPH with the patient as cluster;
 * - analysis.py with Debian's python3-pandas: its Kaplan–Meier estimates against lib/stats.
 * The endpoints in cases.csv are first checked against lib/outcomes (healingObservation) on the
 * source rows. To 1e-6 relative (plus 1e-9 absolute).
 *
 * R with survival and Python with pandas must be installed (scripts/test.sh installs
 * LAMINA_APT_TEST); if not, every test FAILS; none skips.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { pseudonym } from '@/lib/cohorts/deidentify';
import { cutAt } from '@/lib/cohorts/archive';
import { syntheticCohortRows } from '@/lib/demo/cohort-rows';
import { healingObservation } from '@/lib/outcomes/cases';
import { coxPH, kaplanMeier } from '@/lib/stats';
import { exportInput, makeExport, removeExports, parseCsv, SECRET, TODAY, type MadeExport } from '../support/cohort-archive';

const ROWS = { rows: 2000, seed: 21 };
const TIMES = [365, 731, 1461];
const REL = 1e-6;
const ABS = 1e-9;

let made: MadeExport;
let R: Record<string, string>[] = [];
let PY: Record<string, string>[] = [];
let setupError: Error | null = null;

afterAll(removeExports);
beforeAll(async () => {
  made = await makeExport(exportInput(ROWS, { variables: ['kind', 'arch'], k: 5 }));
  try {
    const r = spawnSync('Rscript', ['-e', 'suppressPackageStartupMessages(library(survival)); cat("ok")'], { encoding: 'utf8' });
    if (r.error || r.status !== 0 || !r.stdout.includes('ok'))
      throw new Error(`This suite needs R with survival (Debian: apt-get install r-base-core r-cran-survival; scripts/test.sh installs them). Rscript failed: ${r.error ? r.error.message : r.stderr}`);
    execFileSync('Rscript', [path.join(made.dir, 'analysis.R'), made.dir, path.join(made.dir, 'r.csv')], { stdio: ['ignore', 'ignore', 'pipe'] });
    R = parseCsv(readFileSync(path.join(made.dir, 'r.csv'), 'utf8'));
  } catch (e) {
    setupError = e instanceof Error ? e : new Error(String(e));
  }
}, 180_000);

function close(what: string, actual: number, expected: number | undefined): void {
  if (expected === undefined || Number.isNaN(expected)) expect.fail(`${what}: no reference value`);
  if (!(Math.abs(actual - expected) <= REL * Math.abs(expected) + ABS)) expect.fail(`${what}: Lamina ${actual} vs reference ${expected}`);
}

const observations = (endpoint: string) => made.cases.map((c) => ({ time: Number(c[`${endpoint}_time`]), event: c[`${endpoint}_event`] === '1' }));
const kmAt = (endpoint: string, t: number) => {
  let row = { survival: 1, lower: 1, upper: 1 };
  for (const s of kaplanMeier(observations(endpoint))) if (s.time <= t) row = s;
  return row;
};

describe('the export', () => {
  it('has enough released rows and events to compare, and its healing endpoint is lib/outcomes’ on the source rows', { timeout: 60_000 }, async () => {
    expect(made.summary.cases).toBeGreaterThan(1800);
    const byId = new Map(made.cases.map((c) => [c.case_id, c]));
    let checked = 0;
    for await (const row of syntheticCohortRows(ROWS)) {
      const c = byId.get(pseudonym(SECRET, 'case', row.case.id));
      if (!c) continue;
      const h = healingObservation(cutAt(row.case, TODAY), 365);
      expect([Number(c.healing_left), c.healing_right === undefined || c.healing_right === '' ? null : Number(c.healing_right)]).toEqual([h.left, h.right]);
      checked += 1;
    }
    expect(checked).toBe(made.summary.cases);
    expect(observations('healing').filter((o) => o.event).length).toBeGreaterThan(200);
    expect(observations('tooth_loss').filter((o) => o.event).length).toBeGreaterThan(50);
  });
});

describe('analysis.R (R survival) against lib/stats', () => {
  it.each(['healing', 'tooth_loss'])('Kaplan–Meier of %s at 365, 731 and 1461 days: survfit(Surv(time, event) ~ 1), summary(times =)', (endpoint) => {
    if (setupError) throw setupError;
    for (const t of TIMES) {
      const ref = R.find((r) => r.analysis === `km_${endpoint}` && r.term === String(t));
      const km = kmAt(endpoint, t);
      close(`S(${t})`, km.survival, Number(ref?.estimate));
      close(`lower(${t})`, km.lower, Number(ref?.lower));
      close(`upper(${t})`, km.upper, Number(ref?.upper));
    }
  });
  it('Cox: coxph(Surv(healing_time, healing_event) ~ kind + arch + cluster(patient_id), ties = "efron"): coefficients and robust SE', () => {
    if (setupError) throw setupError;
    const rows = made.cases.map((c) => ({
      time: Number(c.healing_time),
      event: c.healing_event === '1',
      x: [c.kind === 'primary_treatment' ? 1 : 0, c.arch === 'upper' ? 1 : 0],
      cluster: c.patient_id!,
    }));
    const fit = coxPH(rows);
    // R's reference levels: the first alphabetically (nonsurgical_retreatment, lower)
    const terms = ['kindprimary_treatment', 'archupper'];
    terms.forEach((term, i) => {
      const ref = R.find((r) => r.analysis === 'cox_healing' && r.term === term);
      close(`coef ${term}`, fit.coef[i]!, Number(ref?.estimate));
      close(`robust SE ${term}`, fit.robustSe![i]!, Number(ref?.se));
    });
    expect(R.filter((r) => r.analysis === 'cox_healing')).toHaveLength(2);
  });
});

describe('analysis.py (pandas)', () => {
  it('runs with Debian’s Python and pandas, and its Kaplan–Meier estimates equal lib/stats', { timeout: 60_000 }, () => {
    const out = path.join(made.dir, 'py.csv');
    const r = spawnSync('/usr/bin/python3', [path.join(made.dir, 'analysis.py'), made.dir, out], { encoding: 'utf8' });
    if (r.error || r.status !== 0) throw new Error(`analysis.py failed (Debian: apt-get install python3-pandas): ${r.error ? r.error.message : r.stderr}`);
    expect(r.stdout).toContain(`${made.summary.cases} cases of ${made.summary.patients} patients, ${made.summary.reviews} reviews`);
    PY = parseCsv(readFileSync(out, 'utf8'));
    for (const endpoint of ['healing', 'tooth_loss'])
      for (const t of TIMES) close(`py S(${t}) ${endpoint}`, kmAt(endpoint, t).survival, Number(PY.find((p) => p.analysis === `km_${endpoint}` && p.term === String(t))?.estimate));
  });
});

/**
 * Prints the demo world's tooth survival and success rates beside the literature's figures:
 * `npx tsx --tsconfig scripts/tsconfig.json scripts/demo-figures.ts [today] [seeds]`.
 * today defaults to 2026-12-01; seeds (comma-separated) default to the demo seed alone.
 * Survival: lib/stats kaplanMeier on caseObservations' tooth-loss intervals, each event taken
 * at the right end of its interval (the review that found it; exact when dated).
 * Success: the outcome of the 12- and 24-month reviews (a failure found earlier counts as one;
 * "uncertain" is neither and is left out of n, shown beside it).
 * Literature figures are from memory (Ng et al. 2007, 2008, 2010) — see tests/unit/demo/rates.test.ts.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { DEMO_SEED, generateDemoWorld, type DemoCase } from '../lib/demo/cases';
import { hasLesion, lostBy, successAtMilestone, survivalAt, teethPerPatient, toothChains, toothLoss } from '../lib/demo/figures';

const today = process.argv[2] ?? '2026-12-01';
const seeds = (process.argv[3] ?? String(DEMO_SEED)).split(',').map(Number);
const worlds = seeds.map((seed) => generateDemoWorld({ today, seed }));
const cases = worlds.flatMap((w) => w.cases);
const pct = (x: number) => (Number.isFinite(x) ? `${(100 * x).toFixed(1)}%` : '—');

console.log(`Demo world seen on ${today}, seed(s) ${seeds.join(', ')}: ${cases.length} cases, ${worlds.reduce((n, w) => n + w.patients.length, 0)} patients`);
const tpp = worlds.map(teethPerPatient);
console.log(`Treated teeth per patient: ${tpp.map((t) => t.mean.toFixed(2)).join(', ')} (max ${Math.max(...tpp.map((t) => t.max))}); literature 1.1–1.3 (issue 11)`);
console.log(`Lost to follow-up by 4 years (KM of dropping out: no attended review after a missed or closed visit): ${worlds.map((w) => pct(lostBy(w, 1461))).join(', ')}; realistic 20–40% (issue 11)`);
const dated = cases.flatMap((c) => [...c.visits.flatMap((v) => (v.review ? [v.review] : [])), ...c.unplannedReviews]).filter((r) => r.eventDate).length;
console.log(`Events found at a review with their own date (elsewhere): ${dated}; linked follow-on cases: ${cases.filter((c) => c.previousCaseKey).length}`);

console.log('\nTooth survival (Kaplan–Meier, 95% CI), all teeth from their first case:');
const intervals = worlds.flatMap((w) => toothChains(w).map(toothLoss));
const lit: Record<number, string> = { 1: '—', 3: '—', 2: '86% at 2–3 y (Ng 2010, pooled)', 4: '93% at 4–5 y (Ng 2010, pooled); 95% at 4 y (Ng 2011)' };
const turnbull = turnbullInR(intervals, [1, 2, 3, 4].map((y) => Math.round(y * 365.25)));
console.log('| years | Kaplan–Meier (event at the review that found it) | 95% CI | Turnbull (R survfit, interval2) | teeth still seen then | literature (from memory) |\n| --- | --- | --- | --- | --- | --- |');
[1, 2, 3, 4].forEach((years, i) => {
  const days = Math.round(years * 365.25);
  const s = survivalAt(intervals, days);
  const seen = intervals.filter((x) => (x.right ?? x.left) >= days).length;
  console.log(`| ${years} | ${pct(s.survival)} | ${pct(s.lower)}–${pct(s.upper)} | ${turnbull ? pct(turnbull[i]!) : 'R not found'} | ${seen} of ${s.n} | ${lit[years]} |`);
});
console.log('(The world holds five years of cases, so fewer teeth are seen at four years: read the 4-year row with its interval.)');

console.log('\nSuccess at the 12- and 24-month reviews (strict = healed, lenient = healed or healing):');
const groups: [string, (c: DemoCase) => boolean, string][] = [
  ['primary, no lesion', (c) => c.data.kind === 'primary_treatment' && !hasLesion(c), 'strict ~85–97%, lenient ~90–99% (Ng 2008)'],
  ['primary, lesion', (c) => c.data.kind === 'primary_treatment' && hasLesion(c), 'strict ~75–86% (Ng 2007/2008, issue 11)'],
  ['retreatment, no lesion', (c) => c.data.kind === 'nonsurgical_retreatment' && !hasLesion(c), 'strict ~80–95% (Ng 2008 secondary)'],
  ['retreatment, lesion', (c) => c.data.kind === 'nonsurgical_retreatment' && hasLesion(c), 'strict ~62–80% (Ng 2008 secondary, issue 11)'],
  ['all primary', (c) => c.data.kind === 'primary_treatment', 'strict 74.7%, lenient 85.2% pooled (Ng 2007)'],
  ['all retreatment', (c) => c.data.kind === 'nonsurgical_retreatment', 'strict 76.7%, lenient ~77% pooled (Ng 2008 secondary)'],
];
console.log('| group | at | n | strict | lenient | uncertain (not in n) | literature (from memory; judged at ≥1 year) |\n| --- | --- | --- | --- | --- | --- | --- |');
for (const [name, pred, litText] of groups) {
  for (const months of [12, 24]) {
    const r = successAtMilestone(cases.filter(pred), months);
    console.log(`| ${name} | ${months} mo | ${r.n} | ${pct(r.strict)} | ${pct(r.lenient)} | ${r.uncertain} | ${months === 12 ? litText : ''} |`);
  }
}

/** S(t) of R's Turnbull estimate (survival::survfit on Surv(left, right, type = "interval2")); null without Rscript. */
function turnbullInR(rows: { left: number; right: number | null }[], times: number[]): number[] | null {
  const dir = mkdtempSync(join(tmpdir(), 'lamina-figures-'));
  try {
    const csv = join(dir, 'intervals.csv');
    writeFileSync(csv, 'left,right\n' + rows.map((r) => `${r.left},${r.right === null ? 'NA' : r.right}`).join('\n') + '\n');
    const script = `suppressMessages(library(survival)); d <- read.csv("${csv}"); f <- survfit(Surv(left, right, type = "interval2") ~ 1, data = d); cat(summary(f, times = c(${times.join(',')}), extend = TRUE)$surv, sep = "\\n")`;
    const out = execFileSync('Rscript', ['-e', script], { encoding: 'utf8' });
    return out.trim().split(/\s+/).map(Number);
  } catch {
    return null;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/**
 * Benchmark of Lamina's survival statistics beside R's survival package on the
 * same data in the same run: Kaplan–Meier, log-rank (4 groups) and Cox
 * (2 covariates, Efron ties) at 10,000, 100,000 and 1,000,000 observations;
 * then issue 11's analyses on the same rows (with the web server's options
 * only): Turnbull on review-detected intervals (reviews every 180 days, each
 * attended with probability 0.7), cumulative incidence of two causes, Cox with
 * patient clusters (about 1.2 rows per patient) and robust errors, logistic
 * regression with cluster-robust errors (R: glm + sandwich::vcovCL HC1), the
 * log-rank test stratified in 3 strata, and funnel limits at n = rows.
 *
 *   npm run bench -- stats                    (all three sizes, with the web server's Node options)
 *   npx tsx scripts/bench/stats.ts            (the same; set LAMINA_WEB_NODE_OPTIONS for the web server's options)
 *   npx tsx scripts/bench/stats.ts 10000      (chosen sizes)
 *
 * Data: times in days on a 0.01-day grid (many distinct times — about 245,000
 * at 1,000,000 observations, a harder case than the registry's whole days —
 * and some ties), exponential event times depending on group and covariates,
 * uniform censoring (about a third censored). The data are written to a
 * temporary CSV that scripts/bench/stats.R reads; R times each call with
 * system.time, excluding the read.
 *
 * Lamina's input is built beforehand, untimed, as Lamina's own callers hold it:
 * one { time, event } object per case (the shape lib/scoring's timeToFailure
 * returns) for Kaplan–Meier, the same objects pushed into their group's list in
 * case order for log-rank, and one { time, event, x } row per case for Cox
 * (built after the first two are dropped). Lamina's times are wall-clock around
 * each call. Each side reports the least time of REPEATS runs (Lamina warmed up
 * on other data first).
 *
 * Each size runs in its own Node process with the web server's Node options
 * (LAMINA_WEB_NODE_OPTIONS from scripts/lib/services.sh, exported by npm run
 * bench) and once more with Node's defaults, so both figures are in the table. Peak RSS is the first process's maxRSS
 * (process.resourceUsage), which includes the input objects and the Node/tsx
 * baseline (about 90 MB).
 */
import { execFileSync } from 'node:child_process';
import { closeSync, mkdtempSync, openSync, rmSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { performance } from 'node:perf_hooks';
import {
  coxPH,
  cumulativeIncidence,
  funnelLimits,
  kaplanMeier,
  logRank,
  logisticRegression,
  turnbull,
  type CensoredInterval,
  type CompetingRiskRow,
  type CoxRow,
  type LogisticRow,
  type LogRankObservation,
  type SurvivalObservation,
} from '../../lib/stats';
import { createRandom } from '../../lib/demo/random';

/** Uniform [0, 1) numbers from a seed: Lamina's one seeded generator (lib/demo/random.ts). */
const prng = (seed: number): (() => number) => createRandom(seed).next;

interface Columns {
  time: Float64Array;
  event: Uint8Array;
  group: Uint8Array;
  x1: Uint8Array;
  x2: Float64Array;
  /** the issue-11 analyses: patient (cluster), stratum, cause of the event (1 or 2), a binary outcome, and review-detected intervals */
  cluster: Int32Array;
  stratum: Uint8Array;
  cause: Uint8Array;
  y: Uint8Array;
  left: Float64Array;
  /** -1: right-censored */
  right: Float64Array;
}

/** Reviews every 180 days; each attended with probability 0.7. */
const REVIEW_EVERY = 180;

/** The data as columns first (so the CSV is written before any row object exists). */
function generate(n: number, seed: number): Columns {
  const rnd = prng(seed);
  const c: Columns = {
    time: new Float64Array(n),
    event: new Uint8Array(n),
    group: new Uint8Array(n),
    x1: new Uint8Array(n),
    x2: new Float64Array(n),
    cluster: new Int32Array(n),
    stratum: new Uint8Array(n),
    cause: new Uint8Array(n),
    y: new Uint8Array(n),
    left: new Float64Array(n),
    right: new Float64Array(n),
  };
  const rnd2 = prng(seed + 7); // the issue-11 columns from a second stream, so the first three analyses' data are unchanged
  let patient = 0;
  for (let i = 0; i < n; i++) {
    const group = Math.floor(rnd() * 4);
    const x1 = rnd() < 0.4 ? 1 : 0;
    const u1 = Math.max(rnd(), 1e-12);
    const x2 = Math.round(Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * rnd()) * 100) / 100;
    const lp = 0.4 * x1 - 0.3 * x2 + 0.15 * group;
    const tEvent = (-Math.log(Math.max(rnd(), 1e-12)) * 1500) / Math.exp(lp);
    const tCens = rnd() * 4000;
    c.time[i] = Math.max(1, Math.round(Math.min(tEvent, tCens) * 100)) / 100;
    c.event[i] = tEvent <= tCens ? 1 : 0;
    c.group[i] = group;
    c.x1[i] = x1;
    c.x2[i] = x2;
    // about 1.2 treated teeth per patient
    if (i > 0 && rnd2() >= 0.83) c.cluster[i] = c.cluster[i - 1];
    else c.cluster[i] = patient++;
    c.stratum[i] = Math.floor(rnd2() * 3);
    c.cause[i] = c.event[i] === 1 ? (rnd2() < 0.6 ? 1 : 2) : 0;
    c.y[i] = rnd2() < 1 / (1 + Math.exp(-(-0.8 + 0.7 * x1 - 0.4 * x2))) ? 1 : 0;
    // the event found at the first attended review on or after it; right-censored at the last attended review
    let last = 0;
    let right = -1;
    const end = Math.min(tCens, 4000);
    for (let v = REVIEW_EVERY; v <= end; v += REVIEW_EVERY) {
      if (rnd2() >= 0.7) continue;
      if (v >= tEvent) {
        right = v;
        break;
      }
      last = v;
    }
    c.left[i] = last;
    c.right[i] = right;
  }
  return c;
}

/** One { time, event } per case, as lib/scoring's timeToFailure returns it, and the same objects by group. */
function toObservations(c: Columns): { obs: SurvivalObservation[]; groups: Record<string, SurvivalObservation[]> } {
  const n = c.time.length;
  const obs: SurvivalObservation[] = new Array(n);
  const groups: Record<string, SurvivalObservation[]> = { g1: [], g2: [], g3: [], g4: [] };
  for (let i = 0; i < n; i++) {
    const o = { time: c.time[i], event: c.event[i] === 1 };
    obs[i] = o;
    groups[`g${c.group[i] + 1}`].push(o);
  }
  return { obs, groups };
}

/** One Cox row per case. */
function toCoxRows(c: Columns): CoxRow[] {
  const n = c.time.length;
  const rows: CoxRow[] = new Array(n);
  for (let i = 0; i < n; i++) rows[i] = { time: c.time[i], event: c.event[i] === 1, x: [c.x1[i], c.x2[i]] };
  return rows;
}

function writeCsv(file: string, c: Columns): void {
  const fd = openSync(file, 'w');
  writeSync(fd, 'time,status,grp,x1,x2,cl,s,cause,y,left,right\n');
  const chunk: string[] = [];
  for (let i = 0; i < c.time.length; i++) {
    chunk.push(
      `${c.time[i]},${c.event[i]},g${c.group[i] + 1},${c.x1[i]},${c.x2[i]},${c.cluster[i]},s${c.stratum[i]},${c.cause[i]},${c.y[i]},${c.left[i]},${c.right[i] < 0 ? 'NA' : c.right[i]}\n`,
    );
    if (chunk.length === 50_000) {
      writeSync(fd, chunk.join(''));
      chunk.length = 0;
    }
  }
  writeSync(fd, chunk.join(''));
  closeSync(fd);
}

/**
 * The child runs with --expose-gc and collects garbage before each timed run
 * (outside the timing), so one run's garbage does not count against the next
 * run's memory. An old-space cap can be set with LAMINA_BENCH_HEAP_MB (none by
 * default: a cap near the live heap — the 1,000,000 input objects alone hold
 * about 180 MB — makes V8 collect during the timed runs).
 */
const HEAP_MB = Number(process.env.LAMINA_BENCH_HEAP_MB ?? 0);
/** The web server's Node options (scripts/lib/services.sh, exported by npm run bench) added to this shell's. */
const WEB_NODE_OPTIONS = [process.env.NODE_OPTIONS, process.env.LAMINA_WEB_NODE_OPTIONS].filter(Boolean).join(' ');
const HEAP_FLAG = ['--expose-gc', ...(HEAP_MB > 0 ? [`--max-old-space-size=${HEAP_MB}`] : [])];

/** Runs per measurement on each side; the least wall-clock time is reported (the machine is shared). */
const REPEATS = 5;
/**
 * Two of R's analyses grow faster than linearly: the Turnbull estimate (survfitTurnbull multiplies
 * a dense observations x jump-points matrix by a dense jump-points matrix at every EM step) and the
 * cumulative incidence's standard errors (survfit on a factor status: about 6 CPU seconds at 30,000
 * rows, over 5 minutes wall-clock at 100,000 on this shared machine). R runs them once, and only
 * up to this many rows (LAMINA_BENCH_SLOW_R_MAX to change).
 */
const SLOW_R_MAX = Number(process.env.LAMINA_BENCH_SLOW_R_MAX ?? 100_000);

function time<T>(f: () => T): { s: number; cpu: number; v: T } {
  let best = Infinity;
  let cpu = Infinity;
  let v: T | undefined;
  for (let k = 0; k < REPEATS; k++) {
    v = undefined; // let the previous result go before the next run
    (globalThis as { gc?: () => void }).gc?.(); // start each timed run from a collected heap (outside the timing)
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    v = f();
    best = Math.min(best, performance.now() - t0);
    const c = process.cpuUsage(c0);
    cpu = Math.min(cpu, (c.user + c.system) / 1000);
  }
  return { s: best / 1000, cpu: cpu / 1000, v: v as T };
}

/** Times the three analyses, Cox first, each on its own input (built untimed, then dropped). */
function runLamina(c: Columns) {
  let rows: CoxRow[] | null = toCoxRows(c);
  const cx = time(() => coxPH(rows as CoxRow[]));
  rows = null; // the Cox rows go before the observations are built
  (globalThis as { gc?: () => void }).gc?.();
  const input = toObservations(c);
  const km = time(() => kaplanMeier(input.obs));
  const lr = time(() => logRank(input.groups));
  return { km, lr, cx };
}

/** The issue-11 analyses, each on its own input (built untimed, then dropped). */
const EXT_NAMES = [
  'Turnbull (reviews every 180 days)',
  'cumulative incidence, 2 causes',
  'Cox with clusters (robust SE)',
  'logistic, 2 covariates, clusters (robust SE)',
  'log-rank, 4 groups, 3 strata',
  'funnel limits (n = rows, 99.8%)',
] as const;
interface ExtResults {
  s: number[];
  cpu: number[];
  checks: { tbLast: number; ciLast: number; coxRobust: number[]; logitRobust: number[]; strataChi: number; funnel: number[] };
}
function runExtensions(c: Columns): ExtResults {
  const n = c.time.length;
  const out: { s: number; cpu: number }[] = [];
  let intervals: CensoredInterval[] | null = Array.from({ length: n }, (_, i) => ({ left: c.left[i], right: c.right[i] < 0 ? null : c.right[i] }));
  const tb = time(() => turnbull(intervals as CensoredInterval[]));
  intervals = null;
  out.push(tb);
  let cr: CompetingRiskRow[] | null = Array.from({ length: n }, (_, i) => ({ time: c.time[i], cause: c.cause[i] === 0 ? null : String(c.cause[i]) }));
  const ci = time(() => cumulativeIncidence(cr as CompetingRiskRow[]));
  cr = null;
  out.push(ci);
  let cox: CoxRow[] | null = Array.from({ length: n }, (_, i) => ({ time: c.time[i], event: c.event[i] === 1, x: [c.x1[i], c.x2[i]], cluster: c.cluster[i] }));
  const cx = time(() => coxPH(cox as CoxRow[]));
  cox = null;
  out.push(cx);
  let lg: LogisticRow[] | null = Array.from({ length: n }, (_, i) => ({ y: c.y[i] === 1, x: [c.x1[i], c.x2[i]], cluster: c.cluster[i] }));
  const lr = time(() => logisticRegression(lg as LogisticRow[]));
  lg = null;
  out.push(lr);
  const groups: Record<string, LogRankObservation[]> = { g1: [], g2: [], g3: [], g4: [] };
  for (let i = 0; i < n; i++) groups[`g${c.group[i] + 1}`].push({ time: c.time[i], event: c.event[i] === 1, stratum: `s${c.stratum[i]}` });
  const st = time(() => logRank(groups));
  out.push(st);
  const fu = time(() => funnelLimits(0.85, n, 0.998));
  out.push(fu);
  const ciRows = ci.v['1'];
  return {
    s: out.map((o) => o.s),
    cpu: out.map((o) => o.cpu),
    checks: {
      tbLast: tb.v[tb.v.length - 1].survival,
      ciLast: ciRows[ciRows.length - 1].incidence,
      coxRobust: cx.v.robustSe as number[],
      logitRobust: lr.v.robustSe as number[],
      strataChi: st.v.chiSquare,
      funnel: [fu.v.lower, fu.v.upper],
    },
  };
}

interface LaminaSide {
  n: number;
  km: number;
  logRank: number;
  cox: number;
  cpu: number[];
  rssMb: number;
  kmRows: number;
  kmLast: number;
  chiSquare: number;
  coef: number[];
  ext: ExtResults | null;
}

/**
 * One size in a fresh process: generate the data (and write the CSV for R when
 * asked), warm up on other data, time the three analyses, and report the
 * process's peak RSS (so each size's figure is its own, not the largest so far).
 */
function child(n: number, csv: string | null, withExtensions: boolean): void {
  const cols = generate(n, 1000 + n);
  if (csv) writeCsv(csv, cols);
  for (let k = 0; k < 3; k++) runLamina(generate(10_000, 99 + k)); // warm-up (JIT), untimed
  const lam = runLamina(cols);
  let ext: ExtResults | null = null;
  if (withExtensions) {
    for (let k = 0; k < 2; k++) runExtensions(generate(10_000, 199 + k)); // warm-up, untimed
    ext = runExtensions(cols);
  }
  const out: LaminaSide = {
    n,
    km: lam.km.s,
    logRank: lam.lr.s,
    cox: lam.cx.s,
    cpu: [lam.km.cpu, lam.lr.cpu, lam.cx.cpu],
    rssMb: process.resourceUsage().maxRSS / 1024, // kB -> MB
    kmRows: lam.km.v.length,
    kmLast: lam.km.v[lam.km.v.length - 1].survival,
    chiSquare: lam.lr.v.chiSquare,
    coef: lam.cx.v.coef,
    ext,
  };
  console.log(JSON.stringify(out));
}

function main(): void {
  const sizes = process.argv.slice(2).map(Number).filter((v) => v > 0);
  const ns = sizes.length ? sizes : [10_000, 100_000, 1_000_000];
  const dir = mkdtempSync(path.join(tmpdir(), 'lamina-bench-'));
  const f = (v: number) => (v < 0.1 ? v.toFixed(4) : v.toFixed(3));
  const rel = (a: number, b: number) => Math.abs(a - b) / Math.max(Math.abs(b), 1e-300);
  const self = fileURLToPath(import.meta.url);
  try {
    const lines: string[] = [];
    const extLines: string[] = [];
    const checks: string[] = [];
    let rVersion = '';
    for (const n of ns) {
      const csv = path.join(dir, `bench-${n}.csv`);
      // the web server's options: all analyses (and the CSV for R); Node's defaults: the first three only
      const runChild = (env: NodeJS.ProcessEnv, withCsv: boolean): LaminaSide => {
        const args = [...HEAP_FLAG, ...process.execArgv, self, '--child', String(n), withCsv ? 'ext' : 'core', ...(withCsv ? [csv] : [])];
        const text = execFileSync(process.execPath, args, { encoding: 'utf8', maxBuffer: 1 << 20, env, stdio: ['ignore', 'pipe', 'inherit'] });
        return JSON.parse(text.trim().split('\n').pop() as string) as LaminaSide;
      };
      const lam = runChild({ ...process.env, NODE_OPTIONS: WEB_NODE_OPTIONS }, true);
      const lamDefault = runChild(process.env, false);
      const out = execFileSync('Rscript', [fileURLToPath(new URL('./stats.R', import.meta.url)), csv, String(REPEATS), String(SLOW_R_MAX)], {
        encoding: 'utf8',
        maxBuffer: 1 << 20,
      });
      const r = JSON.parse(out.trim().split('\n').pop() as string) as {
        version: string;
        km: number;
        logRank: number;
        cox: number;
        cpu: number[];
        kmRows: number;
        kmLast: number;
        chiSquare: number;
        coef: number[];
        ext: { s: (number | null)[]; cpu: (number | null)[]; tbLast: number | null; ciLast: number | null; coxRobust: number[]; logitRobust: number[]; strataChi: number; funnel: number[] };
      };
      rVersion = r.version;
      rmSync(csv, { force: true });
      const row = (name: string, l: number, rs: number, k: number, ld: number) =>
        `| ${n.toLocaleString('en')} | ${name} | ${f(l)} | ${f(rs)} | ${(rs / l).toFixed(1)}x | ${(r.cpu[k] / Math.max(lam.cpu[k], 1e-6)).toFixed(1)}x | ${lam.rssMb.toFixed(0)} | ${f(ld)} | ${(rs / ld).toFixed(1)}x |`;
      lines.push(row('Kaplan–Meier', lam.km, r.km, 0, lamDefault.km));
      lines.push(row('log-rank, 4 groups', lam.logRank, r.logRank, 1, lamDefault.logRank));
      lines.push(row('Cox, 2 covariates (Efron)', lam.cox, r.cox, 2, lamDefault.cox));
      const ext = lam.ext as ExtResults;
      EXT_NAMES.forEach((name, k) => {
        const rs = r.ext.s[k];
        const rc = r.ext.cpu[k];
        extLines.push(
          `| ${n.toLocaleString('en')} | ${name} | ${f(ext.s[k])} | ${rs === null ? `not run (above ${SLOW_R_MAX.toLocaleString('en')} rows)` : rs < 0.001 ? '< 0.001' : f(rs)} | ${rs === null || rs < 0.001 ? '' : `${(rs / ext.s[k]).toFixed(1)}x`} | ${rc === null || rc < 0.001 ? '' : `${(rc / Math.max(ext.cpu[k], 1e-6)).toFixed(1)}x`} |`,
        );
      });
      const maxRel = (a: number[], b: number[]) => Math.max(...a.map((v, k) => rel(v, b[k])));
      checks.push(
        `n=${n} (issue 11): Turnbull last S ${r.ext.tbLast === null ? 'not compared (R not run)' : `abs.diff ${Math.abs(ext.checks.tbLast - r.ext.tbLast).toExponential(1)} (R's EM stops at 5e-5)`}; ` +
          `incidence of cause 1 at the end ${r.ext.ciLast === null ? 'not compared (R not run)' : `rel.diff ${rel(ext.checks.ciLast, r.ext.ciLast).toExponential(1)}`}; ` +
          `Cox robust SE rel.diff ${maxRel(ext.checks.coxRobust, r.ext.coxRobust).toExponential(1)}; ` +
          `logistic robust SE rel.diff ${maxRel(ext.checks.logitRobust, r.ext.logitRobust).toExponential(1)}; ` +
          `stratified chi-square rel.diff ${rel(ext.checks.strataChi, r.ext.strataChi).toExponential(1)}; ` +
          `funnel limits rel.diff ${maxRel(ext.checks.funnel, r.ext.funnel).toExponential(1)}`,
      );
      checks.push(
        `n=${n}: KM rows ${lam.kmRows} vs ${r.kmRows}, last S rel.diff ${rel(lam.kmLast, r.kmLast).toExponential(1)}; ` +
          `log-rank chi-square rel.diff ${rel(lam.chiSquare, r.chiSquare).toExponential(1)}; ` +
          `Cox coef rel.diff ${rel(lam.coef[0], r.coef[0]).toExponential(1)}, ${rel(lam.coef[1], r.coef[1]).toExponential(1)}`,
      );
    }
    const shown = (o: string | undefined) => (o?.trim() ? `"${o.trim()}"` : '(none)');
    console.log(
      `Lamina on Node ${process.version} as the web server runs it, NODE_OPTIONS ${shown(WEB_NODE_OPTIONS)}` +
        `${process.env.LAMINA_WEB_NODE_OPTIONS ? '' : ' (LAMINA_WEB_NODE_OPTIONS unset: run it with npm run bench -- stats)'}, ` +
        `and again with NODE_OPTIONS ${shown(process.env.NODE_OPTIONS)} (Node's defaults); --expose-gc, heap collected before each timed run` +
        `${HEAP_MB > 0 ? `, --max-old-space-size=${HEAP_MB}` : ''}; ${rVersion}; least of ${REPEATS} runs each side; wall-clock seconds, and the ratio of CPU seconds as well\n`,
    );
    console.log('| n | analysis | Lamina s | R s | R / Lamina | R / Lamina, CPU time | Lamina peak RSS MB | Lamina s, Node defaults | R / Lamina, Node defaults |');
    console.log('|---:|---|---:|---:|---:|---:|---:|---:|---:|');
    for (const l of lines) console.log(l);
    console.log(
      `\nIssue 11 analyses (web server's options only; R: survfit interval2, survfit on a factor status, coxph(cluster =), glm + sandwich::vcovCL(HC1), survdiff + strata(), qbinom/pbinom; R's Turnbull and cumulative incidence run once, up to ${SLOW_R_MAX.toLocaleString('en')} rows):\n`,
    );
    console.log('| n | analysis | Lamina s | R s | R / Lamina | R / Lamina, CPU time |');
    console.log('|---:|---|---:|---:|---:|---:|');
    for (const l of extLines) console.log(l);
    console.log('\nSame data, same answers:');
    for (const c of checks) console.log(`- ${c}`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

const at = process.argv.indexOf('--child');
if (at >= 0) child(Number(process.argv[at + 1]), process.argv[at + 3] ?? null, process.argv[at + 2] === 'ext');
else main();

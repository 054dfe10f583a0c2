/**
 * Benchmark of the research export (issue 14): an export of 10,000 and of 100,000 cases through
 * the queue job, each in a fresh worker process (jobs/worker.ts, as npm start runs it), timed from
 * the request to the row's `done`, with the worker's peak memory (VmHWM, the resident high-water
 * mark from /proc) — memory must stay flat with size (within 20 % between 10k and 100k).
 *
 * The practice is seeded as for the outcomes bench (copies of the demo world's 5,000-case generator,
 * each copy's dates shifted; scripts/lib/bench-world.ts), every patient with research consent; the
 * 10,000-case export is a version of the same cohort cut at the completion date of the 10,000th case.
 *
 *   npm run bench -- cohort                      BENCH_CASES=20000 … (smaller)
 */
import { runUnderScriptsTsconfig } from '../lib/scripts-tsconfig';
import { spawn } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { performance } from 'node:perf_hooks';

await runUnderScriptsTsconfig(import.meta.url);

const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../../mikro-orm.config');
const { todayIn } = await import('../../lib/services/registry-common');
const cohorts = await import('../../lib/services/cohorts');
const { benchActor, seedBenchPractice } = await import('../lib/bench-world');

const N_CASES = Number(process.env.BENCH_CASES ?? 100_000);
const SMALL = Math.round(N_CASES / 10);
const orm = await MikroORM.init({ ...config, pool: { min: 0, max: 4 } });
const conn = orm.em.getConnection();
const today = todayIn('Europe/London');
const slug = `bench-cohort-${N_CASES}-${Date.now()}`;

const { practice, member: researcher, seeded, ms } = await seedBenchPractice(orm, {
  cases: N_CASES,
  today,
  name: 'Bench Cohort (invented)',
  slug,
  member: { email: `research.${slug}@bench.invalid`, name: 'Bench Researcher', role: 'researcher' },
  beforeAnalyze: (practiceId) => conn.execute(`update patient set research_use = true where practice_id = ?`, [practiceId]).then(() => undefined),
});
console.log(`seeded ${seeded.cases.toLocaleString('en-GB')} cases, ${seeded.reviews.toLocaleString('en-GB')} reviews in ${(ms / 1000).toFixed(1)} s`);

const actor = benchActor(researcher, practice, ['researcher']);
const cut = (await conn.execute(`select completion_date::text as d from treatment_case where practice_id = ? and completion_date is not null and archived_at is null order by completion_date, id offset ? limit 1`, [practice.id, SMALL - 1])) as { d: string }[];
const cohort = await cohorts.createCohort(orm.em.fork(), actor, { name: 'Bench cohort' });
await cohorts.saveCohortVersion(orm.em.fork(), actor, cohort.id, { filters: { to: cut[0]!.d }, variables: [] });
await cohorts.saveCohortVersion(orm.em.fork(), actor, cohort.id, { filters: {}, variables: [] });

const peakKb = (pid: number) => {
  try {
    return Number(/VmHWM:\s+(\d+)/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'))?.[1] ?? 0);
  } catch {
    return 0;
  }
};

async function exportThroughWorker(version: number) {
  const worker = spawn(process.execPath, ['--import', 'tsx', 'jobs/worker.ts'], {
    env: { ...process.env, TSX_TSCONFIG_PATH: 'scripts/tsconfig.json', RECALL_SCAN_ON_START: '0' },
    stdio: ['ignore', 'ignore', 'inherit'],
  });
  try {
    const started = performance.now();
    const ex = await cohorts.startCohortExport(orm.em.fork(), actor, cohort.id, { version });
    let peak = 0;
    const deadline = Date.now() + 30 * 60_000;
    for (;;) {
      peak = Math.max(peak, peakKb(worker.pid!));
      const row = (await conn.execute(`select status, cases, byte_size, error from cohort_export where id = ?`, [ex.id])) as { status: string; cases: number | null; byte_size: string | null; error: string | null }[];
      const r = row[0]!;
      if (r.status === 'done') return { seconds: (performance.now() - started) / 1000, peakMb: Math.max(peak, peakKb(worker.pid!)) / 1024, cases: r.cases, bytes: Number(r.byte_size) };
      if (r.status === 'failed' || r.status === 'cancelled') throw new Error(`export ${r.status}: ${r.error}`);
      if (Date.now() > deadline) throw new Error('export did not finish in 30 minutes');
      await new Promise((ok) => setTimeout(ok, 200));
    }
  } finally {
    worker.kill('SIGTERM');
    await new Promise((ok) => worker.once('exit', ok));
  }
}

const small = await exportThroughWorker(1);
const large = await exportThroughWorker(2);
const row = (n: string, x: Awaited<ReturnType<typeof exportThroughWorker>>) =>
  `${n.padEnd(14)} ${String(x.cases).padStart(8)} cases  ${x.seconds.toFixed(1).padStart(7)} s  worker peak RSS ${x.peakMb.toFixed(0).padStart(5)} MB  archive ${(x.bytes / 1e6).toFixed(1)} MB`;
console.log(row(`export ${SMALL}`, small));
console.log(row(`export ${N_CASES}`, large));
const ratio = large.peakMb / small.peakMb;
console.log(`peak memory ratio ${N_CASES}/${SMALL}: ${ratio.toFixed(2)} (flat: within 1.20) ${ratio <= 1.2 ? 'OK' : 'NOT FLAT'}`);
await orm.close(true);
process.exit(0);

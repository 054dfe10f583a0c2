/**
 * Benchmark of the research export (issue 14): an export of 10,000 and of 100,000 cases through
 * the queue job, each in a fresh worker process (jobs/worker.ts, as npm start runs it), timed from
 * the request to the row's `done`, with the worker's peak memory (VmHWM, the resident high-water
 * mark from /proc) — memory must stay flat with size (within 20 % between 10k and 100k).
 *
 * The practice is seeded like the outcomes bench (copies of the demo world's 5,000-case generator,
 * each copy's dates shifted; scripts/bench/outcomes.ts), every patient with research consent; the
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
const entities = await import('../../entities');
const { generateDemoWorld } = await import('../../lib/demo/cases');
type DemoWorld = import('../../lib/demo/cases').DemoWorld;
const { addDaysTo } = await import('../../lib/registry/calendar-date');
const { persistWorld } = await import('../../lib/demo/seed-demo');
const { todayIn } = await import('../../lib/services/registry-common');
const cohorts = await import('../../lib/services/cohorts');
const { DEFAULT_MIN_OBSERVATION_DAYS } = await import('../../lib/scoring');
type Actor = import('../../lib/auth/actor').Actor;

const N_CASES = Number(process.env.BENCH_CASES ?? 100_000);
const SMALL = Math.round(N_CASES / 10);
const orm = await MikroORM.init({ ...config, pool: { min: 0, max: 4 } });
const conn = orm.em.getConnection();
const today = todayIn('Europe/London');
const slug = `bench-cohort-${N_CASES}`;

function replicatedWorld(): DemoWorld {
  const unit = Math.min(5000, N_CASES);
  const base = generateDemoWorld({ today, cases: unit, patients: Math.round(unit * 0.6) });
  const copies = Math.ceil(N_CASES / unit);
  const shift = (k: number) => <T>(v: T): T => {
    if (typeof v === 'string') return (/^\d{4}-\d{2}-\d{2}$/.test(v) ? addDaysTo(v, -k) : v) as T;
    if (Array.isArray(v)) return v.map(shift(k)) as T;
    if (v && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([key, x]) => [key, shift(k)(x)])) as T;
    return v;
  };
  const patients: DemoWorld['patients'] = [];
  const cases: DemoWorld['cases'] = [];
  for (let k = 0; k < copies; k++) {
    const f = shift(k);
    for (const p of base.patients) patients.push({ ...f(p), key: `${p.key}~${k}`, registryNumber: `${p.registryNumber}-${k}` });
    for (const c of base.cases) {
      if (cases.length >= N_CASES) break;
      cases.push({ ...f(c), key: `${c.key}~${k}`, patientKey: `${c.patientKey}~${k}`, previousCaseKey: c.previousCaseKey ? `${c.previousCaseKey}~${k}` : null });
    }
  }
  return { ...base, patients, cases };
}

const em0 = orm.em.fork();
const t0 = performance.now();
const world = replicatedWorld();
const practice = em0.create(entities.PracticeSchema, { name: 'Bench Cohort (invented)', slug: `${slug}-${Date.now()}`, recallPolicy: world.practice.recallPolicy });
const made: [string, { id: string }][] = [];
const emails = new Set([...world.staff.map((s) => s.email), ...world.clinicians]);
for (const c of world.cases) {
  emails.add(c.operatorEmail);
  for (const v of c.visits) if (v.review) emails.add(v.review.assessorEmail);
  for (const r of c.unplannedReviews) emails.add(r.assessorEmail);
}
for (const [i, email] of [...emails].entries()) {
  const u = em0.create(entities.UserSchema, { email: `staff${i + 1}.${practice.slug}@bench.invalid`, name: `Bench Clinician ${i + 1}` });
  made.push([email, u]);
  em0.create(entities.MembershipSchema, { user: u, practice, role: 'clinician' });
}
const researcher = em0.create(entities.UserSchema, { email: `research.${practice.slug}@bench.invalid`, name: 'Bench Researcher' });
em0.create(entities.MembershipSchema, { user: researcher, practice, role: 'researcher' });
await em0.flush();
const seeded = await persistWorld(orm.em.fork(), practice.id, world, new Map(made.map(([e, u]) => [e, u.id])), DEFAULT_MIN_OBSERVATION_DAYS);
await conn.execute(`update patient set research_use = true where practice_id = ?`, [practice.id]);
for (const t of ['patient', 'treatment_case', 'recall_visit', 'review']) await conn.execute(`vacuum analyze ${t}`);
console.log(`seeded ${seeded.cases.toLocaleString('en-GB')} cases, ${seeded.reviews.toLocaleString('en-GB')} reviews in ${((performance.now() - t0) / 1000).toFixed(1)} s`);

const actor: Actor = { userId: researcher.id, email: researcher.email, name: 'Bench Researcher', practiceId: practice.id, practiceName: practice.name, roles: ['researcher'], ip: '127.0.0.1', userAgent: 'bench' };
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

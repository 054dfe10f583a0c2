/**
 * Benchmark of the outcomes area (issue 12) at scale:
 *
 *  1. seeds a fresh practice with 100,000 completed cases of the demo world's generator
 *     (lib/demo/cases.ts: recall visits in every status, several reviews per case with healing,
 *     disease, retreatments, surgery and extractions, follow-on cases on the same tooth) by bulk
 *     insert, then VACUUM ANALYZE: copies of a 5,000-case world, each with its dates moved
 *     (scripts/lib/bench-world.ts, shared with the cohort bench);
 *  2. times each outcomes API view (overview, factor, curves, model, funnel, worklist, the report
 *     PDF and every CSV) by calling its service — what the route handler calls, with a fresh
 *     EntityManager fork per request (permission check, zod parse, data version, the rows, the
 *     engine, the audit event); not over HTTP, so JSON serialisation of the response is timed
 *     separately. Per view: BENCH_REQUESTS requests cycling through 7 filters, p50, p95 and max,
 *     split into the first time a filter is asked ("cold": figures computed from the cached rows)
 *     and repeats (kept figures). Before them the web server's start is run and timed
 *     (lib/services/outcomes-warm.ts warmPractice: the per-case facts derived, then each view's
 *     practice-wide default computed once, which keeps it and compiles the code), so the whole
 *     practice's "cold" request of a view asked with its defaults (overview, factor by kind,
 *     Turnbull healing curves, model, adjusted funnel, worklist) is a kept figure, as in the web
 *     server after its start; BENCH_UNDERIVED=1 skips the start. Then the first request just after a
 *     write to one case, without the warmer (incremental refresh of the rows, the view computed on them) and once the warmer ran
 *     (lib/services/outcomes-cache.ts warmOutcomes, as the web server does in the background).
 *     Also the full read alone (at start and after a bulk change) and the overview engine alone.
 *
 *   npm run bench -- outcomes                      (throwaway services from scripts/bench.sh)
 *   DATABASE_URL=… npx tsx scripts/bench/outcomes.ts
 *   BENCH_CASES=20000 BENCH_REQUESTS=14 …          (smaller)
 *   BENCH_KEEP=1 keeps the practice; BENCH_REUSE=1 reuses a kept one of the same size.
 *
 * The data are invented (the demo world's seeded generator: the same figures on every run).
 *
 * bench: runs as the web server (scripts/bench.sh gives it the server's Node options, a 64 MB young
 * generation; run by hand, set NODE_OPTIONS=--max-semi-space-size=64 for the same)
 */
import { runUnderScriptsTsconfig } from '../lib/scripts-tsconfig';
import { performance } from 'node:perf_hooks';

await runUnderScriptsTsconfig(import.meta.url);
// Every figure current (no lag, lib/env.ts OUTCOMES_MAX_LAG_MS): the first request after a write then
// measures the refresh and the recomputation, as after a quiet spell; read before lib/env.ts is loaded.
process.env.OUTCOMES_MAX_LAG_MS = '0';

const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../../mikro-orm.config');
const entities = await import('../../entities');
const { todayIn } = await import('../../lib/services/registry-common');
const outcomes = await import('../../lib/services/outcomes');
const funnelService = await import('../../lib/services/outcomes-funnel');
const modelService = await import('../../lib/services/outcomes-model');
const reportService = await import('../../lib/services/outcomes-report');
const worklistService = await import('../../lib/services/outcomes-worklist');
const cacheModule = await import('../../lib/services/outcomes-cache');
const lib = await import('../../lib/outcomes');
const warm = await import('../../lib/services/outcomes-warm');
const { DEFAULT_MIN_OBSERVATION_DAYS } = await import('../../lib/scoring');
const { benchActor, seedBenchPractice } = await import('../lib/bench-world');

const N_CASES = Number(process.env.BENCH_CASES ?? 100_000);
const N_REQUESTS = Number(process.env.BENCH_REQUESTS ?? 21);
const KEEP = process.env.BENCH_KEEP === '1';
const REUSE = process.env.BENCH_REUSE === '1';

const orm = await MikroORM.init({ ...config, pool: { min: 0, max: 6 } });
const conn = orm.em.getConnection();
const today = todayIn('Europe/London');
const slug = `bench-outcomes-${N_CASES}`;

// --- 1. seed (or reuse) ---------------------------------------------------------------------------
const em0 = orm.em.fork();
let practice = REUSE ? await em0.findOne(entities.PracticeSchema, { slug }) : null;
let seedNote = '';
if (practice) {
  seedNote = `reused practice ${slug}`;
} else {
  const old = await em0.findOne(entities.PracticeSchema, { slug });
  if (old) await removePractice(old.id);
  const lead = { email: `lead.${slug}@bench.invalid`, name: 'Bench Lead', role: 'auditor' as const };
  const made = await seedBenchPractice(orm, { cases: N_CASES, today, name: 'Bench Outcomes (invented)', slug, member: lead });
  const { seeded } = made;
  practice = made.practice;
  seedNote = `seeded ${seeded.cases.toLocaleString('en-GB')} cases, ${seeded.patients.toLocaleString('en-GB')} patients, ${seeded.visits.toLocaleString('en-GB')} visits, ${seeded.reviews.toLocaleString('en-GB')} reviews in ${(made.ms / 1000).toFixed(1)} s (generation ${(made.generationMs / 1000).toFixed(1)} s)`;
}
const lead = await em0.findOneOrFail(entities.UserSchema, { email: `lead.${slug}@bench.invalid` });
const actor = benchActor(lead, practice, ['auditor']);

// --- 2. the views -----------------------------------------------------------------------------------
type Query = Record<string, string>;
type View = { name: string; run: (q: Query) => Promise<unknown> };
const fresh = () => orm.em.fork();
const VIEWS: View[] = [
  { name: 'overview', run: (q) => outcomes.outcomesOverview(fresh(), actor, q) },
  { name: 'factor (kind)', run: (q) => outcomes.outcomesByFactor(fresh(), actor, { ...q, factor: 'kind' }) },
  { name: 'factor (lesion)', run: (q) => outcomes.outcomesByFactor(fresh(), actor, { ...q, factor: 'lesion' }) },
  { name: 'curves healing KM', run: (q) => outcomes.outcomesCurves(fresh(), actor, { ...q, endpoint: 'healing', method: 'km' }) },
  { name: 'curves healing Turnbull', run: (q) => outcomes.outcomesCurves(fresh(), actor, { ...q, endpoint: 'healing', method: 'turnbull' }) },
  { name: 'curves tooth KM', run: (q) => outcomes.outcomesCurves(fresh(), actor, { ...q, endpoint: 'tooth', method: 'km' }) },
  { name: 'curves tooth Turnbull', run: (q) => outcomes.outcomesCurves(fresh(), actor, { ...q, endpoint: 'tooth', method: 'turnbull' }) },
  { name: 'curves healing KM by kind', run: (q) => outcomes.outcomesCurves(fresh(), actor, { ...q, endpoint: 'healing', method: 'km', factor: 'kind' }) },
  { name: 'curves KM by kind, stratum', run: (q) => outcomes.outcomesCurves(fresh(), actor, { ...q, endpoint: 'healing', method: 'km', factor: 'kind', stratum: 'group' }) },
  { name: 'model (Cox + logistic)', run: (q) => modelService.outcomesModel(fresh(), actor, q) },
  { name: 'funnel adjusted', run: (q) => funnelService.outcomesFunnel(fresh(), actor, { ...q, adjust: 'adjusted' }) },
  { name: 'funnel crude, latest', run: (q) => funnelService.outcomesFunnel(fresh(), actor, { ...q, adjust: 'crude', measure: 'latest' }) },
  { name: 'worklist', run: (q) => worklistService.outcomesWorklist(fresh(), actor, q) },
  { name: 'report PDF', run: async (q) => (await reportService.outcomesReportPdf(fresh(), actor, { ...q, factor: 'kind' })).pdf },
  { name: 'export overview CSV', run: (q) => outcomes.outcomesCsv(fresh(), actor, 'overview', q) },
  { name: 'export factor CSV', run: (q) => outcomes.outcomesCsv(fresh(), actor, 'factor', { ...q, factor: 'kind' }) },
  { name: 'export curves CSV', run: (q) => outcomes.outcomesCsv(fresh(), actor, 'curves', { ...q, endpoint: 'healing', method: 'km' }) },
  { name: 'export model CSV', run: (q) => modelService.outcomesModelCsv(fresh(), actor, q) },
  { name: 'export funnel CSV', run: (q) => funnelService.outcomesFunnelCsv(fresh(), actor, q) },
  { name: 'export worklist CSV', run: (q) => worklistService.worklistCsv(fresh(), actor, q) },
];
// The filters a lead clicks through: the whole practice, each of two clinicians, each of two kinds, a year, two years.
const clinicianIds = ((await conn.execute('select distinct operator_id from treatment_case where practice_id = ? limit 2', [practice.id])) as { operator_id: string }[]).map((r) => r.operator_id);
const year = (back: number) => ({ from: `${Number(today.slice(0, 4)) - back}-01-01`, to: `${Number(today.slice(0, 4)) - back}-12-31` });
const FILTERS: Query[] = [
  {},
  ...clinicianIds.map((clinician) => ({ clinician })),
  { kind: 'primary_treatment' },
  { kind: 'nonsurgical_retreatment' },
  year(1),
  { from: year(3).from, to: year(2).to },
];

const quantile = (xs: number[], p: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.max(0, Math.ceil(p * s.length) - 1))]!;
};
const cache = cacheModule;
const invalidate = () => cache.invalidateOutcomeCases();

// Where a request's time goes, measured once before the timed runs: the full read (what happens at
// start, in the background, and after a bulk change), and the overview engine on the rows. These rows
// are then dropped: the web server holds one copy, the cache's.
invalidate();
const tRead0 = performance.now();
let rows: import('../../lib/outcomes').OutcomeCase[] | null = await outcomes.readOutcomeCases(fresh(), practice.id);
const readMs = performance.now() - tRead0;
const tOv = performance.now();
lib.overview(rows, rows, today, DEFAULT_MIN_OBSERVATION_DAYS);
const overviewEngineMs = performance.now() - tOv;
const tOv2 = performance.now();
lib.overview(rows, rows, today, DEFAULT_MIN_OBSERVATION_DAYS);
const overviewEngineAgainMs = performance.now() - tOv2;
const nRows = rows.length;
rows = null;

// The web server's start (lib/services/outcomes-warm.ts warmPractice, run by warmAtStart in the
// background), timed in its steps: the rows read into the cache, the per-case facts derived, then
// each view's practice-wide default computed once (warmViews: kept, and every code path compiled).
const tStart = performance.now();
await cache.cachedOutcomeCases(fresh(), practice.id, outcomes.OUTCOME_READER);
const startReadMs = performance.now() - tStart;
// BENCH_UNDERIVED=1 skips the rest of the start: the first request of each view then derives what it needs and compiles its code
const UNDERIVED = process.env.BENCH_UNDERIVED === '1';
const tDerive = performance.now();
if (!UNDERIVED) await warm.warmPractice(async () => fresh(), practice.id, { views: false });
const deriveMs = performance.now() - tDerive;
const tViews = performance.now();
if (!UNDERIVED) await warm.warmViews(async () => fresh(), practice.id);
const viewsMs = performance.now() - tViews;

// A write to one case: one statement, as a review or a case edit makes (the triggers bump the data
// version and record the case). The same values are written back, so every run gives the same figures.
const oneCase = ((await conn.execute('select id from treatment_case where practice_id = ? and completion_date is not null order by id limit 1', [practice.id])) as { id: string }[])[0]!.id;
const writeOne = () => conn.execute('update treatment_case set lesion_diameter_mm = lesion_diameter_mm where id = ?', [oneCase]);

// N_REQUESTS per view, cycling through FILTERS: the first time each filter is asked the figures are
// computed (rows cached), later times they come from the cache of figures (same data version)
const first = new Map<string, number[]>(VIEWS.map((v) => [v.name, []]));
const again = new Map<string, number[]>(VIEWS.map((v) => [v.name, []]));
const asked = new Set<string>();
const bytes: Record<string, number> = {};
const jsonMs: Record<string, number> = {};
for (let i = 0; i < N_REQUESTS; i++) {
  for (const v of VIEWS) {
    const q = FILTERS[i % FILTERS.length]!;
    const key = `${v.name}|${JSON.stringify(q)}`;
    const t0 = performance.now();
    const out = await v.run(q);
    (asked.has(key) ? again : first).get(v.name)!.push(performance.now() - t0);
    asked.add(key);
    if (i === 0) {
      const t1 = performance.now();
      const body = typeof out === 'string' || Buffer.isBuffer(out) ? out : JSON.stringify(out);
      jsonMs[v.name] = performance.now() - t1;
      bytes[v.name] = Buffer.byteLength(body);
    }
  }
}

// Cold after a write, with no warmer: one case written, then the view (the cache refreshes the one
// case, the view's figures are computed on the new rows).
const afterWrite: Record<string, number> = {};
const refreshes: string[] = [];
for (const v of VIEWS) {
  await writeOne();
  const t0 = performance.now();
  await v.run({});
  afterWrite[v.name] = performance.now() - t0;
  const r = cache.lastOutcomesRefresh();
  if (r) refreshes.push(`${r.kind}${r.reason ? ` (${r.reason})` : ''} ${r.ms.toFixed(0)} ms`);
}
// Cold after a write, as the web server runs it: the warmer (started by instrumentation.ts) notices the
// new version and recomputes the recently asked views in the background before the next request.
await writeOne();
const tWarm = performance.now();
const warmedViews = await cache.warmOutcomes(fresh(), practice.id, outcomes.OUTCOME_READER);
const warmMs = performance.now() - tWarm;
const afterWarm: Record<string, number> = {};
for (const v of VIEWS) {
  const t0 = performance.now();
  await v.run({});
  afterWarm[v.name] = performance.now() - t0;
}

// The worklist CSV is streamed (worklistCsvStream): how soon its first chunk is ready, beside the whole file above.
const firstChunk: number[] = [];
for (let i = 0; i < 7; i++) {
  const t0 = performance.now();
  const { chunks } = await worklistService.worklistCsvStream(fresh(), actor, {});
  await chunks.next();
  firstChunk.push(performance.now() - t0);
  await chunks.return?.();
}

// --- report -------------------------------------------------------------------------------------------
const counts = (await conn.execute(
  `select (select count(*) from treatment_case where practice_id = ?) cases, (select count(*) from review where practice_id = ?) reviews`,
  [practice.id, practice.id],
)) as { cases: string; reviews: string }[];
const num = (n: number | undefined) => (n === undefined ? '–' : n.toFixed(1)).padStart(9);
console.log(`\nOutcomes benchmark (${today}; PostgreSQL ${(await conn.execute('show server_version'))[0].server_version}; Node ${process.version}${process.env.NODE_OPTIONS?.trim() ? ` (${process.env.NODE_OPTIONS.trim()})` : ''}; load average ${(await import('node:os')).loadavg().map((x) => x.toFixed(1)).join(' ')})`);
console.log(seedNote);
console.log(`practice: ${Number(counts[0]!.cases).toLocaleString('en-GB')} cases, ${Number(counts[0]!.reviews).toLocaleString('en-GB')} reviews; ${nRows.toLocaleString('en-GB')} completed cases read`);
console.log(`full read of the rows (readOutcomeCases): ${readMs.toFixed(0)} ms (again through the cache, as at start: ${startReadMs.toFixed(0)} ms); overview engine on them: ${overviewEngineMs.toFixed(0)} ms first, ${overviewEngineAgainMs.toFixed(0)} ms again (per-case facts memoised)`);
console.log(
  UNDERIVED
    ? "the web server's start NOT run before the views (BENCH_UNDERIVED=1): the first request of each view derives what it needs"
    : `as the web server's start in the background (outcomes-warm.ts warmPractice): per-case facts derived (deriveCaseFacts, then rowFacts) ${deriveMs.toFixed(0)} ms, then each view's practice-wide default computed (warmViews) ${viewsMs.toFixed(0)} ms`,
);
console.log(`after a write to one case: refresh of the rows ${refreshes.length ? refreshes.slice(0, 3).join(', ') : '–'}…; the warmer recomputed ${warmedViews} recent views in ${warmMs.toFixed(0)} ms (in the background in the web server)`);
console.log(`\nservices called directly (as the route handlers call them; not over HTTP), fresh EntityManager fork per request;`);
console.log(`write = the first request of the view just after a write to one case, no warmer (incremental refresh + the view computed); warmed = the same once the warmer ran;`);
console.log(`then ${N_REQUESTS} requests per view cycling through ${FILTERS.length} filters: cold = the first request of a filter (its figures computed from the cached rows), rpt = repeats (kept figures)`);
console.log(`${'view'.padEnd(30)}${'write'.padStart(9)}${'warmed'.padStart(9)}${'p50 ms'.padStart(9)}${'p95 ms'.padStart(9)}${'max ms'.padStart(9)}${'cold p50'.padStart(9)}${'cold p95'.padStart(9)}${'rpt p50'.padStart(9)}${'rpt p95'.padStart(9)}${'JSON ms'.padStart(9)}${'KB'.padStart(7)}`);
let worst = 0;
for (const v of VIEWS) {
  const f = first.get(v.name)!;
  const a = again.get(v.name)!;
  const xs = [...f, ...a];
  worst = Math.max(worst, quantile(xs, 0.95));
  const q = (ys: number[], p: number) => (ys.length ? quantile(ys, p) : undefined);
  console.log(
    `${v.name.padEnd(30)}${num(afterWrite[v.name])}${num(afterWarm[v.name])}${num(q(xs, 0.5))}${num(q(xs, 0.95))}${num(Math.max(...xs))}${num(q(f, 0.5))}${num(q(f, 0.95))}${num(q(a, 0.5))}${num(q(a, 0.95))}${num(jsonMs[v.name])}${String(Math.round(bytes[v.name]! / 1024)).padStart(7)}`,
  );
}
console.log(`worklist CSV (streamed): first chunk after p50 ${quantile(firstChunk, 0.5).toFixed(0)} ms, max ${Math.max(...firstChunk).toFixed(0)} ms (7 requests, whole practice); the whole file in the table above`);
const all = [...first.values(), ...again.values()].flat();
console.log(`\nall views: p50 ${quantile(all, 0.5).toFixed(0)} ms, p95 ${quantile(all, 0.95).toFixed(0)} ms; worst per-view p95 ${worst.toFixed(0)} ms; after a write: worst ${Math.max(...Object.values(afterWrite)).toFixed(0)} ms without the warmer, ${Math.max(...Object.values(afterWarm)).toFixed(0)} ms with it (goal: under 300 ms)`);

async function removePractice(id: string) {
  await conn.execute('delete from audit_event where practice_id = ?', [id]);
  await conn.execute('delete from practice where id = ?', [id]);
  await conn.execute('delete from app_user where email like ?', [`%.${slug}@bench.invalid`]);
}
if (!KEEP) {
  const t = performance.now();
  await removePractice(practice.id);
  console.log(`(bench practice removed in ${((performance.now() - t) / 1000).toFixed(1)} s; BENCH_KEEP=1 keeps it)`);
}
await orm.close(true);

/**
 * Benchmark of bringing a practice's history in (issue 16): an invented practice of 10,000 past
 * cases (lib/demo/history-file.ts, seeded) goes in through the case import, then its 25,000
 * follow-up reviews through the review import from a practice's own .xlsx (its own headers,
 * DD/MM/YYYY dates, decimal commas, its own codes; read, mapped and normalised by lib/import with
 * the mapping step's choices) — and, for comparison, the same reviews in the template's CSV:
 * dry run, then commit, each timed
 * around the service call exactly as the route makes it (permission, parse, checks against the
 * practice, the outcome of every row, the visits, one transaction, audit).
 *
 *   npm run bench -- import-history            (throwaway services from scripts/bench.sh)
 *   DATABASE_URL=… npx tsx scripts/bench/import-history.ts
 *   BENCH_HISTORY_CASES=2000 …                  (smaller; reviews scale with it: 2.5 per case)
 */
import { runUnderScriptsTsconfig } from '../lib/scripts-tsconfig';
import { performance } from 'node:perf_hooks';

await runUnderScriptsTsconfig(import.meta.url);

const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../../mikro-orm.config');
const entities = await import('../../entities');
const { importCases } = await import('../../lib/services/import');
const { importReviews } = await import('../../lib/services/import-reviews');
const { todayIn } = await import('../../lib/services/registry-common');
const { historyWorkbook, historyWorld } = await import('../../lib/demo/history-file');
type Actor = import('../../lib/auth/actor').Actor;

const N_CASES = Number(process.env.BENCH_HISTORY_CASES ?? 10_000);

const orm = await MikroORM.init({ ...config, pool: { min: 0, max: 4 } });
const today = todayIn('Europe/London');
const slug = `bench-history-${Date.now()}`;
const em0 = orm.em.fork();
const practice = em0.create(entities.PracticeSchema, { name: 'Bench History Endodontics (invented)', slug });
const clinicians = Array.from({ length: 4 }, (_, i) => em0.create(entities.UserSchema, { email: `clinician${i + 1}.${slug}@bench.invalid`, name: `Bench Clinician ${i + 1}` }));
const coordinator = em0.create(entities.UserSchema, { email: `desk.${slug}@bench.invalid`, name: 'Bench Coordinator' });
for (const c of clinicians) em0.create(entities.MembershipSchema, { user: c, practice, role: 'clinician' });
em0.create(entities.MembershipSchema, { user: coordinator, practice, role: 'coordinator' });
await em0.flush();
const actor: Actor = {
  userId: coordinator.id,
  email: coordinator.email,
  name: 'Bench Coordinator',
  practiceId: practice.id,
  practiceName: practice.name,
  roles: ['coordinator'],
  ip: '127.0.0.1',
  userAgent: 'bench',
};

const g0 = performance.now();
const world = historyWorld({ seed: 16_2026, cases: N_CASES, today, clinicians: clinicians.map((c) => c.email), thirdEvery: 2 });
const generatedMs = performance.now() - g0;
const nReviews = world.cases.reduce((n, c) => n + c.reviews.length, 0);

const c0 = performance.now();
const cases = await importCases(orm.em.fork(), actor, { mode: 'commit', csv: world.caseCsv });
const caseMs = performance.now() - c0;
if (!cases.committed) {
  console.error('the case import failed (the generated file should be clean):', cases.errors.slice(0, 5));
  process.exit(1);
}

const x0 = performance.now();
const book = await historyWorkbook(world.reviewCells);
const bookMs = performance.now() - x0;
const t0 = performance.now();
const dry = await importReviews(orm.em.fork(), actor, { mode: 'dry-run', file: book.bytes, options: book.options });
const dryMs = performance.now() - t0;
if (dry.errors.length) {
  console.error('review dry run found errors (the generated file should be clean):', dry.errors.slice(0, 5));
  process.exitCode = 1;
}
const tc = performance.now();
const dryCsv = await importReviews(orm.em.fork(), actor, { mode: 'dry-run', csv: world.reviewCsv });
const dryCsvMs = performance.now() - tc;
const t1 = performance.now();
const done = await importReviews(orm.em.fork(), actor, { mode: 'commit', file: book.bytes, options: book.options });
const commitMs = performance.now() - t1;
const t2 = performance.now();
const again = await importReviews(orm.em.fork(), actor, { mode: 'dry-run', csv: world.reviewCsv });
const againMs = performance.now() - t2;

const conn = orm.em.getConnection();
const [counts] = (await conn.execute(
  `select (select count(*) from review where practice_id = ?) reviews, (select count(*) from recall_visit where practice_id = ?) visits,
          (select count(*) from recall_visit where practice_id = ? and status = 'attended') attended`,
  [practice.id, practice.id, practice.id],
)) as { reviews: string; visits: string; attended: string }[];
const mb = (s: string) => (Buffer.byteLength(s) / 1024 / 1024).toFixed(1);
const sec = (ms: number) => `${(ms / 1000).toFixed(2)} s`;
console.log(`\nHistory import benchmark (${today}; PostgreSQL ${(await conn.execute('show server_version'))[0].server_version}; reviews from .xlsx)`);
console.log(`generated ${N_CASES.toLocaleString('en-GB')} cases (${mb(world.caseCsv)} MB CSV) and ${nReviews.toLocaleString('en-GB')} reviews (${mb(world.reviewCsv)} MB CSV; ${(book.bytes.length / 1024 / 1024).toFixed(1)} MB .xlsx written in ${sec(bookMs)}) in ${sec(generatedMs)}`);
console.log(`case import, commit:            ${sec(caseMs)}  (${cases.summary.cases.toLocaleString('en-GB')} cases, ${cases.summary.visits.toLocaleString('en-GB')} visits)`);
console.log(`review import, .xlsx, dry run:  ${sec(dryMs)}  (${dry.summary.validRows.toLocaleString('en-GB')} valid rows, ${dry.errors.length} problems)`);
console.log(`review import, CSV, dry run:    ${sec(dryCsvMs)}  (${dryCsv.summary.validRows.toLocaleString('en-GB')} valid rows; the template's CSV, for comparison)`);
console.log(
  `review import, .xlsx, commit:   ${sec(commitMs)}  (${done.summary.reviews.toLocaleString('en-GB')} reviews; visits ${done.summary.visitsAttended.toLocaleString('en-GB')} attended, ${done.summary.visitsMissed.toLocaleString('en-GB')} missed, ${done.summary.visitsCancelled.toLocaleString('en-GB')} cancelled, ${done.summary.visitsQuiet.toLocaleString('en-GB')} kept out of automatic reminders)`,
);
console.log(`same reviews again (CSV), dry:  ${sec(againMs)}  (${again.summary.duplicates.toLocaleString('en-GB')} duplicates reported, nothing to write)`);
console.log(`stored: ${Number(counts!.reviews).toLocaleString('en-GB')} reviews, ${Number(counts!.visits).toLocaleString('en-GB')} visits (${Number(counts!.attended).toLocaleString('en-GB')} attended)`);
if (Number(counts!.reviews) !== nReviews || again.summary.duplicates !== nReviews) {
  console.error('the stored reviews do not match the file');
  process.exitCode = 1;
}
await orm.close(true);

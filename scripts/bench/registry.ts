/**
 * Benchmark of the case registry at scale (issue 4):
 *
 *  1. seeds a fresh practice with 100,000 completed cases (≈60,000 patients, their recall visits
 *     in every status and reviews at attended visits) by bulk insert, then ANALYZE;
 *  2. times the case-list service — `listCases` from lib/services/cases.ts, called directly with a
 *     fresh EntityManager fork per request, exactly as a route handler calls it (permission check,
 *     zod parse, count + page query, page details, audit event) — over 200 requests with mixed
 *     filters, searches, sorts and pages; prints median, p95 and max overall and per scenario;
 *  3. times a 10,000-row CSV through the import service: dry run, then commit.
 *
 *   npm run bench -- registry                 (throwaway services from scripts/bench.sh)
 *   DATABASE_URL=… npx tsx scripts/bench/registry.ts
 *   BENCH_CASES=20000 BENCH_REQUESTS=100 BENCH_IMPORT_ROWS=2000 BENCH_EXPLAIN=1 …   (smaller; EXPLAIN each scenario)
 *
 * The data are invented and generated with a seeded generator (same figures on every run).
 * The registry services are `server-only` modules: this script runs itself again under
 * scripts/tsconfig.json (where that guard is empty) when started with plain tsx.
 */
import { runUnderScriptsTsconfig } from '../lib/scripts-tsconfig';
import { performance } from 'node:perf_hooks';
import type { VisitStatus } from '../../lib/recall/status';

await runUnderScriptsTsconfig(import.meta.url);

const { randomUUID } = await import('node:crypto');
const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: Papa } = await import('papaparse');
const { default: config } = await import('../../mikro-orm.config');
const entities = await import('../../entities');
const { caseColumns, caseListQuery, listCases, CaseListQuery } = await import('../../lib/services/cases');
const { importCases } = await import('../../lib/services/import');
const { computeOutcome } = await import('../../lib/services/reviews');
const { visitSummary } = await import('../../lib/services/visits');
const { bulkInsert, todayIn } = await import('../../lib/services/registry-common');
const { planImportedVisits, DEFAULT_RECALL_POLICY } = await import('../../lib/recall');
const { addDaysTo, addMonthsClamped } = await import('../../lib/registry/calendar-date');
const { CSV_COLUMNS, templateCsv } = await import('../../lib/registry/csv');
const { toothInfo } = await import('../../lib/teeth');
const { createRandom } = await import('../../lib/demo/random');
type Actor = import('../../lib/auth/actor').Actor;

const N_CASES = Number(process.env.BENCH_CASES ?? 100_000);
const N_REQUESTS = Number(process.env.BENCH_REQUESTS ?? 200);
const N_IMPORT = Number(process.env.BENCH_IMPORT_ROWS ?? 10_000);
const EXPLAIN = process.env.BENCH_EXPLAIN === '1';

// --- a seeded generator (the demo world's Mulberry32: same figures on every run) -----------------------
const { next: rnd, int, pick, weighted } = createRandom(4_2026);

const SYL = ['al', 'bre', 'cor', 'dun', 'el', 'fen', 'gar', 'hol', 'is', 'jor', 'kel', 'lan', 'mor', 'nes', 'or', 'pel', 'quin', 'ros', 'sel', 'tor', 'ul', 'ven', 'wyn', 'yar', 'zel'];
const word = (n: number) => {
  let s = '';
  for (let i = 0; i < n; i++) s += pick(SYL);
  return s.charAt(0).toUpperCase() + s.slice(1);
};
const TEETH: readonly (readonly [number, number])[] = [
  ...[16, 26, 36, 46].map((t) => [t, 9] as const),
  ...[17, 27, 37, 47].map((t) => [t, 5] as const),
  ...[14, 15, 24, 25, 34, 35, 44, 45].map((t) => [t, 3] as const),
  ...[11, 12, 21, 22, 13, 23, 31, 32, 41, 42, 33, 43].map((t) => [t, 1] as const),
];

// --- setup -------------------------------------------------------------------------------------------
const orm = await MikroORM.init({ ...config, pool: { min: 0, max: 6 } });
const today = todayIn('Europe/London');
const slug = `bench-registry-${Date.now()}`;
const em0 = orm.em.fork();
const practice = em0.create(entities.PracticeSchema, { name: 'Bench Endodontics (invented)', slug });
const clinicians = Array.from({ length: 4 }, (_, i) =>
  em0.create(entities.UserSchema, { email: `clinician${i + 1}.${slug}@bench.invalid`, name: `Bench Clinician ${i + 1}` }),
);
const lead = em0.create(entities.UserSchema, { email: `lead.${slug}@bench.invalid`, name: 'Bench Lead' });
for (const c of clinicians) em0.create(entities.MembershipSchema, { user: c, practice, role: 'clinician' });
em0.create(entities.MembershipSchema, { user: lead, practice, role: 'auditor' });
em0.create(entities.MembershipSchema, { user: lead, practice, role: 'coordinator' });
await em0.flush();
const actor: Actor = {
  userId: lead.id,
  email: lead.email,
  name: 'Bench Lead',
  practiceId: practice.id,
  practiceName: practice.name,
  roles: ['auditor', 'coordinator'],
  ip: '127.0.0.1',
  userAgent: 'bench',
};

// --- 1. bulk seed ------------------------------------------------------------------------------------

const seedStart = performance.now();
const nPatients = Math.round(N_CASES * 0.6);
const now = new Date();
const patients = Array.from({ length: nPatients }, (_, i) => ({
  id: randomUUID(),
  practice: practice.id,
  registryNumber: `BR-${String(i + 1).padStart(6, '0')}`,
  givenName: word(2),
  familyName: word(int(2, 3)),
  dateOfBirth: addDaysTo(today, -int(18 * 365, 85 * 365)),
  sex: weighted([
    ['female', 52],
    ['male', 46],
    ['not_stated', 2],
  ] as const),
  email: `p${i + 1}@patients.bench.invalid`,
  phone: null,
  postalCode: null,
  recallContact: true,
  recallChannel: 'email',
  researchUse: rnd() < 0.8,
  consentDate: addDaysTo(today, -int(0, 4 * 365)),
  createdAt: now,
  updatedAt: now,
}));
const cases: Record<string, unknown>[] = [];
const visits: Record<string, unknown>[] = [];
const reviews: Record<string, unknown>[] = [];
const span = 4 * 365;
for (let i = 0; i < N_CASES; i++) {
  const patient = i < nPatients ? patients[i]! : patients[int(0, nPatients - 1)]!;
  const tooth = weighted(TEETH);
  const group = toothInfo(tooth).group;
  const kind = weighted([
    ['primary_treatment', 68],
    ['nonsurgical_retreatment', 24],
    ['apical_surgery', 6],
    ['vital_pulp_therapy', 2],
  ] as const);
  const completion = addDaysTo(today, -int(7, span));
  const pai = int(1, 5);
  const lesion = pai <= 2 ? 0 : pai === 3 ? 2 : pai === 4 ? 4.5 : 9;
  const nCanals = group === 'molar' ? int(3, 4) : group === 'premolar' ? int(1, 2) : 1;
  const withCanals = kind === 'primary_treatment' || kind === 'nonsurgical_retreatment';
  const canals = withCanals
    ? Array.from({ length: nCanals }, (_, k) => ({
        name: ['MB', 'DB', 'P', 'MB2'][k] ?? `C${k}`,
        workingLengthMm: 20,
        apicalSize: 30,
        fillToApexMm: Math.round((rnd() < 0.08 ? -rnd() : rnd() < 0.15 ? 2 + rnd() * 3 : rnd() * 2) * 10) / 10,
      }))
    : [];
  const id = randomUUID();
  const operatorId = clinicians[i % 4]!.id;
  const plan = planImportedVisits(completion, DEFAULT_RECALL_POLICY, today).map((v) => {
    let status: VisitStatus = v.status;
    if (status === 'missed') status = weighted([['attended', 55], ['missed', 28], ['declined', 6], ['cancelled', 5], ['closed', 6]] as const);
    else if (v.windowStart <= today) status = weighted([['planned', 25], ['invited', 40], ['confirmed', 25], ['attended', 10]] as const);
    else if (v.windowStart <= addDaysTo(today, 30)) status = weighted([['planned', 60], ['invited', 40]] as const);
    return { ...v, status };
  });
  cases.push({
    id,
    practice: practice.id,
    ...caseColumns({
      patientId: patient.id,
      operatorId,
      tooth,
      kind,
      startDate: addDaysTo(completion, -int(0, 30)),
      completionDate: completion,
      pulpalDiagnosis: kind === 'primary_treatment' ? 'pulp_necrosis' : kind === 'vital_pulp_therapy' ? 'reversible_pulpitis' : 'previously_treated',
      apicalDiagnosis: pai <= 2 ? 'normal_apical_tissues' : 'asymptomatic_apical_periodontitis',
      paiScore: pai,
      lesionDiameterMm: lesion,
      canals,
    }),
    ...visitSummary(plan),
    source: 'demo',
    createdAt: now,
    updatedAt: now,
  });
  for (const v of plan) {
    const visitId = randomUUID();
    visits.push({
      id: visitId,
      practice: practice.id,
      case: id,
      milestone: v.milestone,
      dueDate: v.dueDate,
      windowStart: v.windowStart,
      windowEnd: v.windowEnd,
      status: v.status,
      reinviteNeeded: false,
      lostToFollowUp: v.status === 'closed',
      closedOn: v.status === 'closed' ? v.windowEnd : null,
      statusChangedAt: now,
      createdAt: now,
      updatedAt: now,
    });
    if (v.status === 'attended') {
      const reviewDate = v.dueDate <= today ? v.dueDate : today;
      const found = Math.max(1, pai - int(0, 3));
      const a = computeOutcome({ baselinePai: pai, completionDate: completion, reviewDate, toothStatus: 'present', paiScore: found, signs: {} });
      reviews.push({
        id: randomUUID(),
        practice: practice.id,
        case: id,
        visit: visitId,
        assessor: operatorId,
        reviewDate,
        daysSinceCompletion: a.daysSinceTreatment,
        toothStatus: 'present',
        paiScore: found,
        lesionDiameterMm: found <= 2 ? 0 : lesion,
        signs: {},
        outcome: a.outcome,
        successStrict: a.successStrict,
        successLenient: a.successLenient,
        outcomeReasons: a.reasons,
        createdAt: now,
        updatedAt: now,
      });
    }
  }
}
const generatedMs = performance.now() - seedStart;
await orm.em.fork().transactional(async (tx) => {
  await bulkInsert(tx, entities.PatientSchema, patients, 5000);
  await bulkInsert(tx, entities.TreatmentCaseSchema, cases, 2000);
  await bulkInsert(tx, entities.RecallVisitSchema, visits, 5000);
  await bulkInsert(tx, entities.ReviewSchema, reviews, 5000);
});
const conn = orm.em.getConnection();
// VACUUM as autovacuum would after a bulk load: statistics, and the visibility map index-only scans need.
for (const t of ['patient', 'treatment_case', 'recall_visit', 'review']) await conn.execute(`vacuum analyze ${t}`);
const seedMs = performance.now() - seedStart;

// --- 2. the case list --------------------------------------------------------------------------------
type Query = Record<string, string | number>;
const month = () => addMonthsClamped(today, -int(1, 46));
const SCENARIOS: { name: string; query: () => Query }[] = [
  { name: 'default (newest first)', query: () => ({}) },
  { name: 'clinician', query: () => ({ operator: pick(clinicians).id }) },
  { name: 'kind + tooth group', query: () => ({ kind: 'nonsurgical_retreatment', toothGroup: pick(['molar', 'premolar', 'incisor']) }) },
  { name: 'visit status + due range, by next visit', query: () => ({ visitStatus: 'invited,confirmed', dueFrom: addDaysTo(today, -60), dueTo: addDaysTo(today, 60), sort: 'nextVisit', dir: 'asc' }) },
  { name: 'missed visits', query: () => ({ visitStatus: 'missed' }) },
  { name: 'completed in a quarter', query: () => { const from = month(); return { completedFrom: from, completedTo: addMonthsClamped(from, 3) }; } },
  { name: 'search registry number', query: () => ({ q: `BR-${String(int(1, nPatients)).padStart(6, '0')}` }) },
  { name: 'search name fragment', query: () => ({ q: pick(patients).familyName.slice(0, 6).toLowerCase() }) },
  { name: 'sort by patient', query: () => ({ sort: 'patient', dir: pick(['asc', 'desc']) }) },
  { name: 'beyond apex, by tooth', query: () => ({ fillLength: 'beyond', sort: 'tooth', dir: 'asc' }) },
  { name: 'clinician + kind, page 20', query: () => ({ operator: pick(clinicians).id, kind: 'primary_treatment', page: 20 }) },
  { name: 'deep page (page 100)', query: () => ({ page: 100 }) },
];
const baseQuery = { pageSize: 50 };

async function timeList(q: Query): Promise<number> {
  const em = orm.em.fork();
  const t0 = performance.now();
  const page = await listCases(em, actor, { ...baseQuery, ...q });
  const ms = performance.now() - t0;
  if (!q.page && page.rows.length === 0 && page.total > 0) throw new Error(`empty page for ${JSON.stringify(q)}`);
  return ms;
}

if (EXPLAIN) {
  const knex = orm.em.fork().getKnex();
  for (const s of SCENARIOS) {
    const f = CaseListQuery.parse({ ...baseQuery, ...s.query() });
    const b = caseListQuery(knex, practice.id, f);
    const count = b.clone().count('* as n').toString();
    const order = f.sort === 'patient' ? [{ column: 'p.family_name', order: f.dir }, { column: 'p.given_name', order: f.dir }] : [];
    const pageSql = (f.sort === 'patient' ? b.clone().join('patient as p', (j) => j.on('p.id', 'c.patient_id').andOnVal('p.practice_id', practice.id)) : b.clone())
      .select('c.id')
      .orderBy([...order, { column: f.sort === 'nextVisit' ? 'c.next_visit_date' : f.sort === 'tooth' ? 'c.tooth' : 'c.completion_date', order: f.dir }, { column: 'c.id', order: f.dir }])
      .limit(50)
      .offset((f.page - 1) * 50)
      .toString();
    for (const [what, sql] of [['count', count], ['page', pageSql]] as const) {
      const plan = (await conn.execute(`explain (analyze, buffers off, timing off, summary on) ${sql}`)) as { 'QUERY PLAN': string }[];
      console.log(`\n--- ${s.name} (${what})\n${plan.map((p) => p['QUERY PLAN']).join('\n')}`);
    }
  }
}

for (let i = 0; i < 12; i++) await timeList(SCENARIOS[i % SCENARIOS.length]!.query()); // warm-up
const samples: { scenario: string; ms: number }[] = [];
for (let i = 0; i < N_REQUESTS; i++) {
  const s = SCENARIOS[i % SCENARIOS.length]!;
  samples.push({ scenario: s.name, ms: await timeList(s.query()) });
}
const quantile = (xs: number[], p: number) => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.max(0, Math.ceil(p * s.length) - 1))]!;
};

// --- 3. import ---------------------------------------------------------------------------------------
const template = Papa.parse<string[]>(templateCsv().trim()).data;
const header = template[0]!;
const example = Object.fromEntries(header.map((h, i) => [h, template[1]![i]!]));
const importRows: Record<string, string>[] = [];
const nNew = Math.round(N_IMPORT * 0.7);
for (let i = 0; i < N_IMPORT; i++) {
  const reg = i < nNew ? `IM-${String(i + 1).padStart(6, '0')}` : `IM-${String(int(1, nNew)).padStart(6, '0')}`;
  const first = i < nNew;
  const completion = addDaysTo(today, -int(30, 4 * 365));
  const start = addDaysTo(completion, -14);
  importRows.push({
    ...example,
    registry_number: reg,
    ...(first
      ? { given_name: word(2), family_name: word(3), email: `${reg.toLowerCase()}@patients.bench.invalid`, consent_date: addDaysTo(today, -4 * 365 - 30) }
      : { given_name: '', family_name: '', date_of_birth: '', sex: '', email: '', phone: '', postal_code: '', recall_contact: '', recall_channel: '', research_use: '', consent_date: '' }),
    operator_email: clinicians[i % 4]!.email,
    tooth_fdi: String(weighted(TEETH.filter(([t]) => toothInfo(t).group === 'molar'))),
    start_date: start,
    completion_date: completion,
    definitive_restoration_date: addDaysTo(completion, 40),
  });
}
// A case is one patient, tooth, kind and start date: move a generated duplicate's start back a day.
const seenCases = new Set<string>();
for (const r of importRows) {
  while (seenCases.has(`${r.registry_number}|${r.tooth_fdi}|${r.start_date}`)) r.start_date = addDaysTo(r.start_date!, -1);
  seenCases.add(`${r.registry_number}|${r.tooth_fdi}|${r.start_date}`);
}
const csvText = Papa.unparse({ fields: CSV_COLUMNS.map((c) => c.name), data: importRows.map((r) => CSV_COLUMNS.map((c) => r[c.name] ?? '')) }, { newline: '\r\n' });
const t0 = performance.now();
const dry = await importCases(orm.em.fork(), { ...actor, roles: ['coordinator'] }, { mode: 'dry-run', csv: csvText });
const dryMs = performance.now() - t0;
if (dry.errors.length) {
  console.error('import dry run found errors (the generated file should be clean):', dry.errors.slice(0, 5));
  process.exitCode = 1;
}
const t1 = performance.now();
const committed = await importCases(orm.em.fork(), { ...actor, roles: ['coordinator'] }, { mode: 'commit', csv: csvText });
const commitMs = performance.now() - t1;

// --- report ------------------------------------------------------------------------------------------
const counts = (await conn.execute(
  `select (select count(*) from treatment_case where practice_id = ?) cases, (select count(*) from patient where practice_id = ?) patients,
          (select count(*) from recall_visit where practice_id = ?) visits, (select count(*) from review where practice_id = ?) reviews`,
  [practice.id, practice.id, practice.id, practice.id],
)) as { cases: string; patients: string; visits: string; reviews: string }[];
const pad = (s: string, n: number) => s.padEnd(n);
const num = (n: number) => n.toFixed(1).padStart(8);
console.log(`\nCase registry benchmark (${today}; PostgreSQL ${(await conn.execute('show server_version'))[0].server_version})`);
console.log(`seeded ${N_CASES.toLocaleString('en-GB')} cases, ${nPatients.toLocaleString('en-GB')} patients, ${visits.length.toLocaleString('en-GB')} visits, ${reviews.length.toLocaleString('en-GB')} reviews in ${(seedMs / 1000).toFixed(1)} s (generation ${(generatedMs / 1000).toFixed(1)} s)`);
console.log(`\ncase list: listCases() service, fresh EntityManager fork per request, pageSize 50, ${N_REQUESTS} requests after 12 warm-up`);
console.log(`${pad('scenario', 44)}${'n'.padStart(4)}${'median ms'.padStart(11)}${'p95 ms'.padStart(9)}${'max ms'.padStart(9)}`);
for (const s of SCENARIOS) {
  const xs = samples.filter((x) => x.scenario === s.name).map((x) => x.ms);
  console.log(`${pad(s.name, 44)}${String(xs.length).padStart(4)}${num(quantile(xs, 0.5)).padStart(11)}${num(quantile(xs, 0.95)).padStart(9)}${num(Math.max(...xs)).padStart(9)}`);
}
const all = samples.map((x) => x.ms);
console.log(`${pad('ALL', 44)}${String(all.length).padStart(4)}${num(quantile(all, 0.5)).padStart(11)}${num(quantile(all, 0.95)).padStart(9)}${num(Math.max(...all)).padStart(9)}`);
console.log(`\nimport of a ${N_IMPORT.toLocaleString('en-GB')}-row CSV (${(csvText.length / 1024 / 1024).toFixed(1)} MB, ${nNew.toLocaleString('en-GB')} new patients) through importCases():`);
console.log(`  dry run  ${(dryMs / 1000).toFixed(2)} s  (${dry.summary.validRows} valid rows, ${dry.errors.length} errors)`);
console.log(`  commit   ${(commitMs / 1000).toFixed(2)} s  (checks again, then one transaction: ${committed.summary.cases} cases, ${committed.summary.newPatients} patients, ${committed.summary.visits} visits; committed ${committed.committed})`);
console.log(`\npractice ${slug}: ${counts[0]!.cases} cases, ${counts[0]!.patients} patients, ${counts[0]!.visits} visits, ${counts[0]!.reviews} reviews`);

if (process.env.BENCH_KEEP !== '1') {
  const t = performance.now();
  await conn.execute('delete from audit_event where practice_id = ?', [practice.id]);
  await conn.execute('delete from practice where id = ?', [practice.id]);
  await conn.execute('delete from app_user where email like ?', [`%.${slug}@bench.invalid`]);
  console.log(`(bench practice removed in ${((performance.now() - t) / 1000).toFixed(1)} s; BENCH_KEEP=1 keeps it)`);
}
await orm.close(true);

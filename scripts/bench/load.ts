/**
 * Load benchmark (issue 15): 50 concurrent signed-in users over HTTP against the production build, at
 * 100,000 cases.
 *
 *  1. seeds a fresh practice with BENCH_CASES (default 100,000) completed cases of the demo world's
 *     generator (scripts/lib/bench-world.ts, as the outcomes and cohort benches), gives ten people a
 *     password — 4 clinicians who treated cases, 3 recall coordinators, 3 practice leads (auditor) —
 *     and stores 12 small drawn films (JPEG, lib/demo/drawn-films.ts) through the upload service;
 *  2. starts the web server on the production build (scripts/web-server.mjs, the server `npm start`
 *     runs, on NEXT_DIST_DIR, which scripts/bench.sh builds for this bench) and signs each person in
 *     once through next-auth's credentials sign-in (csrf token, then the callback), keeping the cookie;
 *  3. one warm-up pass of every request of every person, untimed (the outcomes rows are read at start
 *     by the web server's warmer; the first ask of each filter computes its figures), then the load
 *     itself, untimed, for BENCH_WARMUP_REQUESTS (20) per connection (V8's compiled code, PostgreSQL's
 *     buffers: the figures are of a server that has been running, not of its first minute);
 *  4. autocannon (loopback, bounded by a request count: BENCH_REQUESTS per connection, default 60)
 *     with 5 connections per person — 50 in all — each person's connections looping through their
 *     own mix of the main APIs:
 *       clinician   case list with a filter, case page, outcomes overview (own cases), case page,
 *                   review save (a real POST with Origin, a valid body, a new case each time),
 *                   film thumbnail
 *       coordinator desk queues (all, or one clinician's), a queue's rows, case list with a filter, case page,
 *                   film thumbnail
 *       lead        outcomes overview, by factor, curves, worklist (cycling through filters), case list, case page
 *  5. prints per route: requests, p50 / p95 / p99 / max ms, non-2xx, and unanswered (socket errors and
 *     timeouts: sent and never answered, counted per route). Exits non-zero on any non-2xx answer
 *     (a 5xx is a bug; a 4xx means the scenario is wrong) or any request left unanswered (built by
 *     autocannon and never answered; it can exceed autocannon's own error count). Goal: p95 under
 *     500 ms per route.
 *
 *   npm run bench -- load                       (throwaway services and the build from scripts/bench.sh)
 *   BENCH_CASES=10000 npm run bench -- load     (smaller, to try it)
 *   BENCH_REQUESTS=60 (per connection), BENCH_CONNECTIONS_PER_USER=5, BENCH_TIMEOUT_S=30
 *   BENCH_ROUTE_COSTS=1 first runs each route alone and prints the web server's and PostgreSQL's CPU a request
 *     (BENCH_ROUTE_COSTS=case,list: only those steps; BENCH_ROUTE_REQUESTS=100 each; BENCH_LOAD=0 skips the mixed load)
 *   BENCH_WEB_INSTANCES=2 runs two web servers behind haproxy (least connections)
 *   BENCH_CPU_PROF=DIR writes a V8 CPU profile of the web server into DIR (open it in Chrome's DevTools)
 *   BENCH_PG_STATEMENTS=1 (with LAMINA_PG_OPTS='-c shared_preload_libraries=pg_stat_statements') prints
 *     the statements PostgreSQL spent the load's time on
 *   LAMINA_BUILD=never reuses the build in .next-bench while changing only this script (see bench.sh)
 *
 * Latency is measured from the moment autocannon builds a request (just before it writes it) to its
 * full answer. The machine is shared: the load average is printed with the figures.
 *
 * bench: needs the production build (scripts/bench.sh builds NEXT_DIST_DIR when this line is present)
 */
import { runUnderScriptsTsconfig } from '../lib/scripts-tsconfig';
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { performance } from 'node:perf_hooks';

await runUnderScriptsTsconfig(import.meta.url);

const { default: autocannon } = await import('autocannon');
const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../../mikro-orm.config');
const entities = await import('../../entities');
const { todayIn } = await import('../../lib/services/registry-common');
const { hashPassword } = await import('../../lib/auth/password');
const { uploadFilm } = await import('../../lib/services/films');
const { drawRadiograph, filmJpeg } = await import('../../lib/demo/drawn-films');
const { addDaysTo } = await import('../../lib/registry/calendar-date');
const { benchActor, seedBenchPractice } = await import('../lib/bench-world');
const { freePort } = await import('../lib/free-port');
const { childrenOf, cpuBetween, cpuSnapshot, readStatements, serviceGroups, statementsWanted, topStatements } = await import('../lib/bench-proc');
type Role = import('../../lib/auth/roles').Role;
type AcRequest = import('autocannon').Request;

const need = ['DATABASE_URL', 'REDIS_URL', 'S3_URL', 'NEXTAUTH_SECRET', 'APP_URL', 'NEXT_DIST_DIR', 'LAMINA_DATA'];
const missing = need.filter((k) => !process.env[k]);
if (missing.length) {
  console.error(`bench/load: run through scripts/bench.sh (missing ${missing.join(', ')})`);
  process.exit(2);
}
const N_CASES = Number(process.env.BENCH_CASES ?? 100_000);
const PER_CONNECTION = Number(process.env.BENCH_REQUESTS ?? 60);
const CONNECTIONS_PER_USER = Number(process.env.BENCH_CONNECTIONS_PER_USER ?? 5);
const TIMEOUT_S = Number(process.env.BENCH_TIMEOUT_S ?? 30);
const WARMUP_PER_CONNECTION = Number(process.env.BENCH_WARMUP_REQUESTS ?? 20);
const GOAL_P95_MS = 500;
const APP_URL = process.env.APP_URL!.replace(/\/+$/, '');
const WEB_PORT = Number(new URL(APP_URL).port);
const repo = path.resolve(import.meta.dirname, '../..');
const PASSWORD = `bench-load-${process.pid}-correct-horse`;
const slug = `bench-load-${N_CASES}`;
const today = todayIn('Europe/London');
const load = () => os.loadavg().map((x) => x.toFixed(1)).join(' ');

// --- 1. the practice, the people, the films -----------------------------------------------------------
const orm = await MikroORM.init({ ...config, pool: { min: 0, max: 4 } });
const conn = orm.em.getConnection();
const knex = orm.em.getKnex();
const lead = { email: `lead.${slug}@bench.invalid`, name: 'Bench Lead', role: 'auditor' as const };
const made = await seedBenchPractice(orm, { cases: N_CASES, today, name: 'Bench Load (invented)', slug, member: lead });
const practice = made.practice;
console.log(
  `seeded ${made.seeded.cases.toLocaleString('en-GB')} cases, ${made.seeded.reviews.toLocaleString('en-GB')} reviews in ${(made.ms / 1000).toFixed(1)} s (load average ${load()})`,
);

const hash = await hashPassword(PASSWORD);
// The four clinicians with the most cases sign in as themselves (their outcomes are their own cases).
const clinicians = (await knex('treatment_case as c')
  .join('app_user as u', 'u.id', 'c.operator_id')
  .where('c.practice_id', practice.id)
  .groupBy('u.id', 'u.email')
  .orderByRaw('count(*) desc')
  .limit(4)
  .select('u.id', 'u.email')) as { id: string; email: string }[];
const em1 = orm.em.fork();
const extra: { email: string; role: Role }[] = [
  ...[1, 2, 3].map((i) => ({ email: `coordinator${i}.${slug}@bench.invalid`, role: 'coordinator' as const })),
  ...[2, 3].map((i) => ({ email: `lead${i}.${slug}@bench.invalid`, role: 'auditor' as const })),
];
const practiceRef = em1.getReference(entities.PracticeSchema, practice.id);
for (const p of extra) {
  const u = em1.create(entities.UserSchema, { email: p.email, name: `Bench ${p.role}` });
  em1.create(entities.MembershipSchema, { user: u, practice: practiceRef, role: p.role });
}
await em1.flush();
await knex('app_user').where('email', 'like', `%.${slug}@bench.invalid`).update({ password_hash: hash });
type Person = { email: string; role: 'clinician' | 'coordinator' | 'auditor'; id: string; cookie: string };
const people: Person[] = [
  ...clinicians.map((c) => ({ email: c.email, role: 'clinician' as const, id: c.id, cookie: '' })),
  ...extra.filter((p) => p.role === 'coordinator').map((p) => ({ email: p.email, role: 'coordinator' as const, id: '', cookie: '' })),
  { email: lead.email, role: 'auditor' as const, id: '', cookie: '' },
  ...extra.filter((p) => p.role === 'auditor').map((p) => ({ email: p.email, role: 'auditor' as const, id: '', cookie: '' })),
];

// Cases to open, and completed cases not archived to record a review on (a new one each time).
const caseIds = ((await conn.execute('select id from treatment_case where practice_id = ? order by md5(id::text) limit 2000', [practice.id])) as { id: string }[]).map((r) => r.id);
const reviewable = ((await conn.execute(
  'select id from treatment_case where practice_id = ? and completion_date is not null and archived_at is null order by md5(id::text || ?) limit 5000',
  [practice.id, 'review'],
)) as { id: string }[]).map((r) => r.id);

const clinicianUser = await orm.em.fork().findOneOrFail(entities.UserSchema, clinicians[0]!.id);
const filmActor = benchActor(clinicianUser, practice, ['clinician']);
const filmIds: string[] = [];
for (let i = 0; i < 12; i++) {
  const bytes = await filmJpeg(drawRadiograph(640, 480, 100 + i), 85);
  const r = await uploadFilm(orm.em.fork(), filmActor, caseIds[i]!, { role: 'follow_up' }, bytes);
  filmIds.push(r.film.id);
}

// --- 2. the web server and the sign-ins -------------------------------------------------------------------
const logFile = path.join(process.env.LAMINA_DATA!, 'logs', 'load-web.log');
fs.mkdirSync(path.dirname(logFile), { recursive: true });
const out = fs.openSync(logFile, 'a');
const profDir = process.env.BENCH_CPU_PROF ? path.resolve(process.env.BENCH_CPU_PROF) : null;
/**
 * BENCH_WEB_INSTANCES (default 1) web servers. With more than one, they listen on free ports behind
 * Debian's haproxy on APP_URL's port (least connections, keep-alive to the instances; the instances
 * trust it as their one proxy), the deployment the scale test proves: stateless instances, one per core.
 */
const INSTANCES = Math.max(1, Number(process.env.BENCH_WEB_INSTANCES ?? 1));
const ports = INSTANCES === 1 ? [WEB_PORT] : await Promise.all(Array.from({ length: INSTANCES }, freePort));
const detachedChild = (command: string, args: string[], env: NodeJS.ProcessEnv): ChildProcess =>
  spawn(command, args, { cwd: repo, env, stdio: ['ignore', out, out], detached: true });
const webs: ChildProcess[] = ports.map((port) =>
  detachedChild(process.execPath, [...(profDir ? ['--cpu-prof', `--cpu-prof-dir=${profDir}`] : []), 'scripts/web-server.mjs', '-H', '127.0.0.1', '-p', String(port)], {
    ...process.env,
    ...(INSTANCES > 1 ? { TRUSTED_PROXIES: '127.0.0.1' } : {}),
    NODE_OPTIONS: `${process.env.NODE_OPTIONS ?? ''} ${process.env.LAMINA_WEB_NODE_OPTIONS ?? ''}`.trim(),
  }),
);
let proxy: ChildProcess | null = null;
if (INSTANCES > 1) {
  const cfg = path.join(process.env.LAMINA_DATA!, 'load-haproxy.cfg');
  fs.writeFileSync(
    cfg,
    `global\n  maxconn 4096\n\ndefaults\n  mode http\n  timeout connect 5s\n  timeout client 120s\n  timeout server 120s\n  option forwardfor\n\n` +
      `frontend lamina\n  bind 127.0.0.1:${WEB_PORT}\n  default_backend web\n\nbackend web\n  balance leastconn\n` +
      ports.map((port, i) => `  server web${i + 1} 127.0.0.1:${port}\n`).join(''),
  );
  proxy = detachedChild('haproxy', ['-db', '-f', cfg], process.env);
}
fs.closeSync(out);
const children = () => [...webs, ...(proxy ? [proxy] : [])];
const webPids = () => webs.flatMap((w) => [w.pid!, ...childrenOf(w.pid!)]);
const stopWeb = () => {
  for (const c of children()) {
    try {
      process.kill(-c.pid!, 'SIGTERM');
    } catch {
      /* gone */
    }
  }
};
process.on('exit', stopWeb);
let webExited = false;
for (const c of children()) c.on('exit', () => (webExited = true));

async function until(seconds: number, fn: () => Promise<boolean>): Promise<boolean> {
  const end = Date.now() + seconds * 1000;
  while (Date.now() < end) {
    if (webExited) return false;
    if (await fn().catch(() => false)) return true;
    await new Promise((r) => setTimeout(r, 250));
  }
  return false;
}
const t0 = performance.now();
const answers = async (port: number) => (await fetch(`http://127.0.0.1:${port}/api/health`)).status < 500;
if (!(await until(240, async () => (await Promise.all([...ports, WEB_PORT].map(answers))).every(Boolean)))) {
  console.error(`bench/load: the web server did not answer within 240 s (log: ${logFile})`);
  process.exit(1);
}
console.log(
  `${INSTANCES === 1 ? 'web server' : `${INSTANCES} web servers behind haproxy`} up in ${((performance.now() - t0) / 1000).toFixed(1)} s on ${APP_URL} (build ${process.env.NEXT_DIST_DIR})`,
);

/** next-auth's credentials sign-in, as the sign-in page does it; returns the Cookie header to reuse. */
async function signIn(email: string): Promise<string> {
  const jar = new Map<string, string>();
  const keep = (r: Response) => {
    for (const line of r.headers.getSetCookie()) {
      const [pair] = line.split(';');
      const i = pair!.indexOf('=');
      jar.set(pair!.slice(0, i).trim(), pair!.slice(i + 1).trim());
    }
  };
  const cookie = () => [...jar].map(([k, v]) => `${k}=${v}`).join('; ');
  const csrf = await fetch(`${APP_URL}/api/auth/csrf`);
  keep(csrf);
  const { csrfToken } = (await csrf.json()) as { csrfToken: string };
  const r = await fetch(`${APP_URL}/api/auth/callback/credentials`, {
    method: 'POST',
    redirect: 'manual',
    headers: { 'content-type': 'application/x-www-form-urlencoded', origin: APP_URL, 'sec-fetch-site': 'same-origin', cookie: cookie() },
    body: new URLSearchParams({ email, password: PASSWORD, csrfToken, callbackUrl: `${APP_URL}/`, json: 'true' }).toString(),
  });
  keep(r);
  if (!jar.get('next-auth.session-token')) throw new Error(`bench/load: sign-in of a ${email.split('.')[0]} failed (answer ${r.status})`);
  return cookie();
}
for (const p of people) p.cookie = await signIn(p.email);
console.log(`${people.length} people signed in (${people.filter((p) => p.role === 'clinician').length} clinicians, ${people.filter((p) => p.role === 'coordinator').length} coordinators, ${people.filter((p) => p.role === 'auditor').length} leads)`);

// --- 3. the scenario ----------------------------------------------------------------------------------------
type Step = { route: string; method: 'GET' | 'POST'; path: () => string; body?: () => string };
const cycle = <T>(xs: readonly T[]) => {
  let i = 0;
  return () => xs[i++ % xs.length]!;
};
const clinicianIds = clinicians.map((c) => c.id);
const listQueries = [
  'pageSize=50',
  `operator=${clinicianIds[1]}&pageSize=50`,
  'kind=nonsurgical_retreatment&toothGroup=molar&pageSize=50',
  `visitStatus=invited,confirmed&dueFrom=${addDaysTo(today, -60)}&dueTo=${addDaysTo(today, 60)}&sort=nextVisit&dir=asc&pageSize=50`,
  'visitStatus=missed&pageSize=50',
  `completedFrom=${addDaysTo(today, -400)}&completedTo=${addDaysTo(today, -310)}&pageSize=50`,
  'q=smith&pageSize=50',
  'sort=patient&dir=asc&pageSize=50',
  'page=20&pageSize=50',
];
const year = Number(today.slice(0, 4));
const outcomeQueries = ['', 'kind=primary_treatment', `from=${year - 2}-01-01&to=${year - 2}-12-31`, `clinician=${clinicianIds[0]}`];
const deskQueries = ['', ...clinicianIds.map((id) => `clinician=${id}`)];
const deskRowQueries = ['queue=due_soon', 'queue=overdue', 'queue=call', 'queue=awaiting_reply', `queue=this_month&clinician=${clinicianIds[2]}`, 'queue=missed&sort=patient'];
const q = (s: string) => (s ? `?${s}` : '');
const nextCase = cycle(caseIds);
const nextReviewable = cycle(reviewable);
const nextFilm = cycle(filmIds);
const nextList = cycle(listQueries);
const nextDesk = cycle(deskQueries);
const nextOutcome = cycle(outcomeQueries);
const nextDeskRows = cycle(deskRowQueries);

const STEPS = {
  list: { route: 'GET /api/cases (filters)', method: 'GET', path: () => `/api/cases?${nextList()}` },
  case: { route: 'GET /api/cases/:id', method: 'GET', path: () => `/api/cases/${nextCase()}` },
  desk: { route: 'GET /api/recall/queues', method: 'GET', path: () => `/api/recall/queues${q(nextDesk())}` },
  deskRows: { route: 'GET /api/recall/visits (a queue)', method: 'GET', path: () => `/api/recall/visits?${nextDeskRows()}` },
  overview: { route: 'GET /api/outcomes/overview', method: 'GET', path: () => `/api/outcomes/overview${q(nextOutcome())}` },
  factor: { route: 'GET /api/outcomes/factor', method: 'GET', path: () => `/api/outcomes/factor?${['factor=kind', nextOutcome()].filter(Boolean).join('&')}` },
  curves: { route: 'GET /api/outcomes/curves', method: 'GET', path: () => `/api/outcomes/curves?${['endpoint=healing&method=km', nextOutcome()].filter(Boolean).join('&')}` },
  worklist: { route: 'GET /api/outcomes/worklist', method: 'GET', path: () => `/api/outcomes/worklist${q(nextOutcome())}` },
  review: {
    route: 'POST /api/cases/:id/reviews',
    method: 'POST',
    path: () => `/api/cases/${nextReviewable()}/reviews`,
    body: () => JSON.stringify({ reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 1, otherFindings: 'Calm.' }),
  },
  thumbnail: { route: 'GET /api/films/:id/thumbnail', method: 'GET', path: () => `/api/films/${nextFilm()}/thumbnail` },
} satisfies Record<string, Step>;
const MIX: Record<Person['role'], Step[]> = {
  clinician: [STEPS.list, STEPS.case, STEPS.overview, STEPS.case, STEPS.review, STEPS.thumbnail],
  coordinator: [STEPS.desk, STEPS.deskRows, STEPS.list, STEPS.case, STEPS.thumbnail],
  auditor: [STEPS.overview, STEPS.factor, STEPS.curves, STEPS.worklist, STEPS.list, STEPS.case],
};
const ROUTES = [...new Set(Object.values(STEPS).map((s) => s.route))];

function headersFor(p: Person, step: Step): Record<string, string> {
  const h: Record<string, string> = { cookie: p.cookie, accept: 'application/json' };
  if (step.method === 'POST') Object.assign(h, { 'content-type': 'application/json', origin: APP_URL, 'sec-fetch-site': 'same-origin' });
  return h;
}

// Warm-up: every step of every person once, in turn (untimed); the outcomes filters each once.
const tw = performance.now();
const warmFailures: string[] = [];
for (const p of people) {
  const warm: Step[] = [...MIX[p.role], ...(p.role === 'auditor' ? [STEPS.overview, STEPS.factor, STEPS.curves, STEPS.worklist].flatMap((s) => outcomeQueries.map(() => s)) : [])];
  for (const step of warm) {
    const r = await fetch(`${APP_URL}${step.path()}`, { method: step.method, headers: headersFor(p, step), body: step.body?.() });
    await r.arrayBuffer();
    if (r.status >= 300) warmFailures.push(`${step.route} as ${p.role}: ${r.status}`);
  }
}
if (warmFailures.length) {
  console.error(`bench/load: the warm-up got answers that are not 2xx:\n  ${warmFailures.join('\n  ')}`);
  process.exit(1);
}
console.log(`warm-up pass in ${((performance.now() - tw) / 1000).toFixed(1)} s`);

/** Stops the web server (writing its CPU profile, if asked) and removes the bench's practice and people. */
async function cleanUp() {
  const exited = Promise.all(children().map((c) => new Promise((r) => (c.exitCode !== null || c.signalCode !== null ? r(null) : c.once('exit', r)))));
  stopWeb();
  await Promise.race([exited, new Promise((r) => setTimeout(r, 15_000))]);
  if (profDir) console.log(`CPU profile of the web server in ${profDir}`);
  await conn.execute('delete from audit_event where practice_id = ?', [practice.id]);
  await conn.execute('delete from practice where id = ?', [practice.id]);
  await conn.execute('delete from app_user where email like ?', [`%.${slug}@bench.invalid`]);
  await orm.close(true);
}

// Where the machine's CPU goes: the web server(s), haproxy, PostgreSQL, Redis and this process
// (autocannon's client), read from /proc before and after.
const WEB_GROUP = INSTANCES === 1 ? 'web server' : `${INSTANCES} web servers`;
const processGroups = () => ({ [WEB_GROUP]: webPids(), ...(proxy ? { haproxy: [proxy.pid!] } : {}), ...serviceGroups(), 'bench (autocannon)': [process.pid] });

const quantile = (xs: number[], p: number) => {
  if (!xs.length) return NaN;
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.max(0, Math.ceil(p * s.length) - 1))]!;
};
const num = (n: number) => (Number.isNaN(n) ? '–' : n.toFixed(0)).padStart(8);
type Ctx = { started?: number };
/** An autocannon request of `step` as `p`, timed from just before it is written (`sent`) to its full answer (`answered`). */
function timedRequest(p: Person, step: Step, answered?: (status: number, ms: number) => void, sent?: () => void): AcRequest {
  return {
    method: step.method,
    setupRequest: (req: AcRequest, context: object) => {
      (context as Ctx).started = performance.now();
      sent?.();
      return { ...req, path: step.path(), headers: headersFor(p, step), ...(step.body ? { body: step.body() } : {}) };
    },
    onResponse: (status: number, _body: string, context: object) => answered?.(status, performance.now() - (context as Ctx).started!),
  };
}
// BENCH_ROUTE_COSTS=1: before the load, each route alone (2 connections, 100 requests, one person
// who may use it): its latency and the CPU the web server and PostgreSQL spent a request, which
// says where the mixed load's CPU goes.
const routeCosts = process.env.BENCH_ROUTE_COSTS;
if (routeCosts) {
  const whoFor: Record<string, Person> = {};
  for (const p of people) for (const step of MIX[p.role]) whoFor[step.route] ??= p;
  console.log(`\n${'route alone (2 connections)'.padEnd(32)}${'requests'.padStart(9)}${'p50 ms'.padStart(8)}${'web ms/req'.padStart(12)}${'pg ms/req'.padStart(11)}`);
  const only = routeCosts === '1' ? null : routeCosts.split(',');
  for (const [key, step] of Object.entries(STEPS) as [string, Step][]) {
    if (only && !only.includes(key)) continue;
    const p = whoFor[step.route]!;
    const ms: number[] = [];
    const before = cpuSnapshot(processGroups());
    const r = await autocannon({
      url: APP_URL,
      connections: 2,
      amount: Number(process.env.BENCH_ROUTE_REQUESTS ?? 100),
      timeout: TIMEOUT_S,
      requests: [timedRequest(p, step, (_status, took) => ms.push(took))],
    });
    const used = new Map(cpuBetween(before, cpuSnapshot(processGroups())));
    const n = r.requests.total || 1;
    console.log(
      `${step.route.padEnd(32)}${String(n).padStart(9)}${num(quantile(ms, 0.5))}${((used.get(WEB_GROUP) ?? 0) / n).toFixed(1).padStart(12)}${((used.get('PostgreSQL') ?? 0) / n).toFixed(1).padStart(11)}${r.non2xx ? `  non-2xx ${r.non2xx}` : ''}`,
    );
  }
  if (process.env.BENCH_LOAD === '0') {
    await cleanUp();
    process.exit(0);
  }
}

// --- 4. the load ----------------------------------------------------------------------------------------------
type Stat = { ms: number[]; sent: number; non2xx: Map<number, number> };
const stats = new Map<string, Stat>(ROUTES.map((r) => [r, { ms: [], sent: 0, non2xx: new Map() }]));

/** One person's connections looping through their mix: `perConnection` requests each, into `into` (null: not recorded). */
function instanceFor(p: Person, perConnection: number, into: Map<string, Stat> | null) {
  const requests: AcRequest[] = MIX[p.role].map((step) => {
    if (!into) return timedRequest(p, step);
    const s = into.get(step.route)!;
    const answered = (status: number, ms: number) => {
      s.ms.push(ms);
      if (status < 200 || status >= 300) s.non2xx.set(status, (s.non2xx.get(status) ?? 0) + 1);
    };
    return timedRequest(p, step, answered, () => s.sent++);
  });
  return autocannon({
    url: APP_URL,
    connections: CONNECTIONS_PER_USER,
    amount: CONNECTIONS_PER_USER * perConnection,
    timeout: TIMEOUT_S,
    requests,
  });
}
// The load itself, untimed, for BENCH_WARMUP_REQUESTS per connection first: a server that has run
// for a while has its code compiled by V8 and PostgreSQL's buffers holding what the mix reads; the
// figures are of that server, not of its first minute. Its answers must be 2xx too.
if (WARMUP_PER_CONNECTION > 0) {
  const tu = performance.now();
  const warm = await Promise.all(people.map((p) => instanceFor(p, WARMUP_PER_CONNECTION, null)));
  const bad = warm.reduce((a, r) => a + r.non2xx + r.errors, 0);
  if (bad) {
    console.error(`bench/load: the warm-up load got ${bad} answers that are not 2xx or no answer`);
    process.exit(1);
  }
  console.log(`warm-up load: ${warm.reduce((a, r) => a + r.requests.total, 0)} requests (${WARMUP_PER_CONNECTION} per connection, untimed) in ${((performance.now() - tu) / 1000).toFixed(1)} s`);
}
const statementsBefore = statementsWanted ? await readStatements(knex) : null;
const cpuBefore = cpuSnapshot(processGroups());
const loadBefore = load();
const tl = performance.now();
const loadFrom = Date.now();
const results = await Promise.all(people.map((p) => instanceFor(p, PER_CONNECTION, stats)));
const seconds = (performance.now() - tl) / 1000;
const loadTo = Date.now();
const loadAfter = load();
const cpu = cpuBetween(cpuBefore, cpuSnapshot(processGroups()));
const statements = statementsBefore ? topStatements(statementsBefore, await readStatements(knex), 20) : null;

// --- 5. the table -------------------------------------------------------------------------------------------------
const counts = (await conn.execute('select (select count(*) from treatment_case where practice_id = ?) cases, (select count(*) from review where practice_id = ?) reviews', [practice.id, practice.id])) as { cases: string; reviews: string }[];
console.log(
  `\nLoad benchmark (${today}; Node ${process.version}; ${os.cpus().length} cores; load average ${loadBefore} before, ${loadAfter} after)`,
);
console.log(
  `practice: ${Number(counts[0]!.cases).toLocaleString('en-GB')} cases, ${Number(counts[0]!.reviews).toLocaleString('en-GB')} reviews; ${people.length * CONNECTIONS_PER_USER} connections ` +
    `(${people.length} signed-in people × ${CONNECTIONS_PER_USER}), ${PER_CONNECTION} requests each, over loopback; ${seconds.toFixed(1)} s, ${(results.reduce((a, r) => a + r.requests.total, 0) / seconds).toFixed(1)} requests/s`,
);
console.log(`${'route'.padEnd(32)}${'requests'.padStart(9)}${'p50 ms'.padStart(8)}${'p95 ms'.padStart(8)}${'p99 ms'.padStart(8)}${'max ms'.padStart(8)}${'non-2xx'.padStart(9)}${'errors'.padStart(8)}  goal`);
let failed = false;
let missed = 0;
for (const route of ROUTES) {
  const s = stats.get(route)!;
  const non2xx = [...s.non2xx.values()].reduce((a, b) => a + b, 0);
  const unanswered = s.sent - s.ms.length;
  const p95 = quantile(s.ms, 0.95);
  if (non2xx || unanswered) failed = true;
  if (!(p95 < GOAL_P95_MS)) missed++;
  console.log(
    `${route.padEnd(32)}${String(s.ms.length).padStart(9)}${num(quantile(s.ms, 0.5))}${num(p95)}${num(quantile(s.ms, 0.99))}${num(Math.max(...s.ms))}${String(non2xx).padStart(9)}${String(unanswered).padStart(8)}  ${p95 < GOAL_P95_MS ? 'ok' : `p95 ≥ ${GOAL_P95_MS} ms`}`,
  );
  if (non2xx) console.log(`${''.padEnd(32)}statuses: ${[...s.non2xx].map(([k, v]) => `${k}×${v}`).join(', ')}`);
}
const all = [...stats.values()].flatMap((s) => s.ms);
const socket = results.reduce((a, r) => a + r.errors, 0);
const timeouts = results.reduce((a, r) => a + r.timeouts, 0);
console.log(
  `all: ${all.length} answered, p50 ${num(quantile(all, 0.5)).trim()} ms, p95 ${num(quantile(all, 0.95)).trim()} ms, p99 ${num(quantile(all, 0.99)).trim()} ms; ` +
    `autocannon: ${socket} errors (of which ${timeouts} timeouts at ${TIMEOUT_S} s), ${results.reduce((a, r) => a + r.non2xx, 0)} non-2xx; ${missed} route(s) over the ${GOAL_P95_MS} ms p95 goal`,
);
if (socket) failed = true;
const answered = all.length;
console.log(
  `CPU during the load (${(seconds * os.cpus().length).toFixed(0)} core-seconds in ${seconds.toFixed(1)} s): ` +
    cpu.map(([group, ms]) => `${group} ${(ms / 1000).toFixed(1)} s (${(ms / answered).toFixed(1)} ms a request)`).join(', '),
);
console.log(warmRoundsDuring(loadFrom, loadTo));
if (statements) console.log(`\nPostgreSQL statements during the load (pg_stat_statements), by total time:\n${statements}`);

/**
 * The outcomes warmer's rounds that ended inside the timed window (the web server logs one line a
 * round, lib/services/outcomes-cache.ts): each computes the recently asked views again on new rows,
 * a view at a time in one piece, during which the instance answers nothing else.
 */
function warmRoundsDuring(from: number, to: number): string {
  const rounds = fs
    .readFileSync(logFile, 'utf8')
    .split('\n')
    .filter((line) => line.includes('"msg":"outcomes warmed"'))
    .map((line) => JSON.parse(line) as { time: string; views: number; viewsMs: number; longestViewMs: number; ms: number; refresh: { kind: string; changedCases: number; ms: number } | null })
    .filter((r) => Date.parse(r.time) >= from && Date.parse(r.time) <= to);
  if (!rounds.length) return 'outcomes warmer: no round ended during the timed load';
  const sum = (f: (r: (typeof rounds)[number]) => number) => rounds.reduce((a, r) => a + f(r), 0);
  return (
    `outcomes warmer: ${rounds.length} round(s) ended during the timed load: ${sum((r) => r.views)} views computed again in ${sum((r) => r.viewsMs)} ms ` +
    `(longest ${Math.max(...rounds.map((r) => r.longestViewMs))} ms in one piece), rows refreshed ${rounds.filter((r) => r.refresh).map((r) => `${r.refresh!.kind} ${r.refresh!.changedCases} cases ${r.refresh!.ms} ms`).join(', ') || 'not at all'}`
  );
}

// --- clean up ------------------------------------------------------------------------------------------------------
await cleanUp();
if (failed) {
  console.error('bench/load: FAILED (non-2xx answers or requests left unanswered; see the table)');
  process.exit(1);
}

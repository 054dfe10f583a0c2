/**
 * The scale test (issue 15): two web instances and two workers against ONE PostgreSQL, Redis,
 * SMTP fake and S3 fake, behind Debian's haproxy on loopback. Prints a PASS/FAIL line with its
 * figures per check, writes a vitest-shaped JSON report (so scripts/summarize-tests.mjs counts the
 * checks) and exits non-zero on any failure.
 *
 * Run by scripts/scale-test.sh (`npm run scale-test`: throwaway services, migrations, a build in
 * .next-scale) and by scripts/test.sh in its short form (`--short`, reusing .next-test and the
 * run's services). Needs DATABASE_URL, REDIS_URL, SMTP_URL, MAILBOX_URL, MAILBOX_SECRET, S3_*,
 * NEXTAUTH_SECRET, APP_URL (the proxy's URL: LAMINA_WEB_PORT), LAMINA_DATA and NEXT_DIST_DIR.
 *
 *   node --import tsx scripts/scale-test.ts [--short] [--reminders N] [--kill-reminders N] [--report FILE]
 *
 * What is shown:
 *   1. the proxy hands requests to both instances (round robin)
 *   2. a session made on instance A works on instance B (stateless web: the JWT cookie and the DB)
 *   3. the proxy's X-Forwarded-For is trusted (TRUSTED_PROXIES=127.0.0.1) and a client's forged one is not
 *   4. sign-in throttling is shared: wrong passwords split over A and B add up (Redis)
 *   5. N reminders sent by two workers arrive exactly once each (counted at the SMTP fake)
 *   6. the hourly scan exists once (one job scheduler, one next run) with both workers up, and with
 *      a two-second schedule each slot runs once, not once per worker
 *   7. a worker killed with SIGKILL mid-run loses nothing and duplicates nothing
 *   8. a film uploaded through A is served by B (the object store is shared)
 *   9. a research export started on A, built by one of the workers, is followed and downloaded on B
 *      (the archive in the object store, its row in PostgreSQL, the job in Redis)
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { createHash, randomBytes, randomUUID } from 'node:crypto';
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import { parseArgs } from 'node:util';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { MikroORM } from '@mikro-orm/postgresql';
import type { Knex } from '@mikro-orm/knex';
import sharp from 'sharp';
import config from '../mikro-orm.config';
import { hashPassword } from '../lib/auth/password';
import { QUEUES, RECALL_SCAN_SCHEDULER_ID } from '../lib/queue/names';
import { fromLocalDate } from '../lib/registry/calendar-date';
import { freePort } from './lib/free-port';
import { seedDueVisits } from './lib/reminder-seed';

const { values: args } = parseArgs({
  options: {
    short: { type: 'boolean', default: false },
    /** Only the worker checks (5, 6, 7): no build, no proxy, no web instances. */
    'workers-only': { type: 'boolean', default: false },
    reminders: { type: 'string' },
    'kill-reminders': { type: 'string' },
    report: { type: 'string' },
  },
  strict: true,
});
const SHORT = args.short;
const WORKERS_ONLY = args['workers-only'];
const N = Number(args.reminders ?? (SHORT ? 200 : 2000));
const KILL_N = Number(args['kill-reminders'] ?? (SHORT ? 200 : 1000));
const repo = path.resolve(import.meta.dirname, '..');
const need = ['DATABASE_URL', 'REDIS_URL', 'SMTP_URL', 'MAILBOX_URL', 'MAILBOX_SECRET', 'NEXTAUTH_SECRET', 'APP_URL', 'LAMINA_DATA', ...(WORKERS_ONLY ? [] : ['NEXT_DIST_DIR'])];
const missingEnv = need.filter((k) => !process.env[k]);
if (missingEnv.length) {
  console.error(`scale-test: run through scripts/scale-test.sh (missing ${missingEnv.join(', ')})`);
  process.exit(2);
}
const APP_URL = process.env.APP_URL!.replace(/\/+$/, '');
const PROXY_PORT = Number(new URL(APP_URL).port);
const TAG = randomBytes(3).toString('hex');
const PASSWORD = `scale-${TAG}-correct-horse`;
const PREFIX = `lamina-scale-${TAG}`;
const WORK = fs.mkdtempSync(path.join(process.env.LAMINA_DATA!, 'scale-'));
const LOGS = path.join(process.env.LAMINA_DATA!, 'logs');
fs.mkdirSync(LOGS, { recursive: true });

// --- results -------------------------------------------------------------------------------------

interface Check {
  title: string;
  ok: boolean;
  detail: string;
}
const checks: Check[] = [];
function check(title: string, ok: boolean, detail: string) {
  checks.push({ title, ok, detail });
  console.log(`${ok ? 'PASS' : 'FAIL'}  ${title} — ${detail}`);
}
const figures: [string, string][] = [];
const log = (m: string) => console.log(`scale-test: ${m}`);
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Polls `fn` until it returns a value that is not null/false, or the deadline passes (then null). */
async function until<T>(seconds: number, fn: () => Promise<T | null | false>, everyMs = 200): Promise<T | null> {
  const end = Date.now() + seconds * 1000;
  for (;;) {
    const v = await fn().catch(() => null);
    if (v !== null && v !== false) return v as T;
    if (Date.now() > end) return null;
    await sleep(everyMs);
  }
}

// --- processes -----------------------------------------------------------------------------------

const children = new Map<string, ChildProcess>();

function launch(name: string, command: string, argv: string[], env: NodeJS.ProcessEnv): ChildProcess {
  const out = fs.openSync(path.join(LOGS, `scale-${name}.log`), 'a');
  const child = spawn(command, argv, { cwd: repo, env, stdio: ['ignore', out, out], detached: true });
  fs.closeSync(out);
  children.set(name, child);
  child.on('exit', () => {
    if (children.get(name) === child) children.delete(name);
  });
  return child;
}

/** Signals a child's whole process group. */
function signal(child: ChildProcess, sig: NodeJS.Signals) {
  try {
    process.kill(-child.pid!, sig);
  } catch {
    /* gone */
  }
}

async function stop(name: string, sig: NodeJS.Signals = 'SIGTERM') {
  const child = children.get(name);
  if (!child || child.exitCode !== null) return;
  const exited = new Promise((r) => child.once('exit', r));
  signal(child, sig);
  const t = setTimeout(() => signal(child, 'SIGKILL'), 10_000);
  await exited;
  clearTimeout(t);
}

async function stopAll() {
  await Promise.all([...children.keys()].map((n) => stop(n)));
}


// --- HTTP with a chosen local address ---------------------------------------------------------------

interface Answer {
  status: number;
  headers: http.IncomingHttpHeaders;
  body: Buffer;
}

function request(
  url: string,
  options: { method?: string; headers?: Record<string, string>; body?: Buffer | string; from?: string } = {},
): Promise<Answer> {
  return new Promise((resolve, reject) => {
    const u = new URL(url);
    const req = http.request(
      { host: u.hostname, port: u.port, path: u.pathname + u.search, method: options.method ?? 'GET', headers: options.headers, localAddress: options.from, timeout: 60_000 },
      (res) => {
        const parts: Buffer[] = [];
        res.on('data', (d: Buffer) => parts.push(d));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers, body: Buffer.concat(parts) }));
        res.on('error', reject);
      },
    );
    req.on('timeout', () => req.destroy(new Error(`timed out: ${url}`)));
    req.on('error', reject);
    if (options.body) req.write(options.body);
    req.end();
  });
}

/** A cookie jar for one browser. */
class Browser {
  cookies = new Map<string, string>();
  constructor(
    readonly from: string,
    readonly forged?: string,
  ) {}
  cookieHeader() {
    return [...this.cookies].map(([k, v]) => `${k}=${v}`).join('; ');
  }
  keep(a: Answer) {
    const set = a.headers['set-cookie'] ?? [];
    for (const line of set) {
      const [pair] = line.split(';');
      const i = pair!.indexOf('=');
      const name = pair!.slice(0, i).trim();
      const value = pair!.slice(i + 1).trim();
      if (/max-age=0|expires=thu, 01 jan 1970/i.test(line) || value === '') this.cookies.delete(name);
      else this.cookies.set(name, value);
    }
  }
  /** A request through the proxy, pinned to instance `to` ('a' | 'b') or round robin when left out. */
  async go(pathname: string, options: { method?: string; headers?: Record<string, string>; body?: Buffer | string; to?: 'a' | 'b' } = {}) {
    const headers: Record<string, string> = { ...(options.headers ?? {}) };
    if (this.cookies.size) headers.cookie = this.cookieHeader();
    if (options.to) headers['x-scale-instance'] = options.to;
    if (this.forged) headers['x-forwarded-for'] = this.forged;
    const a = await request(`${APP_URL}${pathname}`, { method: options.method, headers, body: options.body, from: this.from });
    this.keep(a);
    return a;
  }
  /** next-auth's credentials sign-in; returns the error message, or null when signed in. */
  async signIn(email: string, password: string, to: 'a' | 'b'): Promise<string | null> {
    const csrf = await this.go('/api/auth/csrf', { to });
    const { csrfToken } = JSON.parse(csrf.body.toString()) as { csrfToken: string };
    const body = new URLSearchParams({ email, password, csrfToken, callbackUrl: `${APP_URL}/`, json: 'true' }).toString();
    const a = await this.go('/api/auth/callback/credentials', {
      method: 'POST',
      to,
      body,
      headers: { 'content-type': 'application/x-www-form-urlencoded', origin: APP_URL, 'sec-fetch-site': 'same-origin' },
    });
    let url = '';
    if (a.headers.location) url = a.headers.location;
    else {
      try {
        url = (JSON.parse(a.body.toString()) as { url?: string }).url ?? '';
      } catch {
        return `unexpected answer ${a.status}`;
      }
    }
    const error = new URL(url, APP_URL).searchParams.get('error');
    if (error) return error;
    return this.cookies.has('next-auth.session-token') ? null : `no session cookie (answer ${a.status})`;
  }
}

// --- set-up ----------------------------------------------------------------------------------------

function haproxyConfig(a: number, b: number): string {
  // Round robin over both instances; `x-scale-instance: a|b` pins a request to one (the test's
  // way to say "made on A, used on B"). option forwardfor appends the client's address to
  // X-Forwarded-For; the instances trust exactly one proxy address (TRUSTED_PROXIES=127.0.0.1).
  return `global
  maxconn 4096

defaults
  mode http
  timeout connect 5s
  timeout client 120s
  timeout server 120s
  option forwardfor
  option http-server-close

frontend lamina
  bind 127.0.0.1:${PROXY_PORT}
  acl pin_a req.hdr(x-scale-instance) -m str a
  acl pin_b req.hdr(x-scale-instance) -m str b
  use_backend web_a if pin_a
  use_backend web_b if pin_b
  default_backend web
  http-response set-header x-served-by %[srv_name]

backend web
  balance roundrobin
  server a 127.0.0.1:${a}
  server b 127.0.0.1:${b}

backend web_a
  server a 127.0.0.1:${a}

backend web_b
  server b 127.0.0.1:${b}
`;
}

function webEnv(): NodeJS.ProcessEnv {
  return {
    ...process.env,
    TRUSTED_PROXIES: '127.0.0.1',
    // the web instances queue research exports where this run's workers take them
    QUEUE_PREFIX: PREFIX,
    NODE_OPTIONS: `${process.env.NODE_OPTIONS ?? ''} ${process.env.LAMINA_WEB_NODE_OPTIONS ?? ''}`.trim(),
  };
}

function workerEnv(name: string, extra: Record<string, string> = {}): NodeJS.ProcessEnv {
  return {
    ...process.env,
    TSX_TSCONFIG_PATH: 'scripts/tsconfig.json',
    QUEUE_PREFIX: PREFIX,
    WORKER_NAME: name,
    // A killed worker's jobs go to the other after this much silence (the outbox lease is the same).
    WORKER_LOCK_MS: '6000',
    SMTP_TIMEOUT_MS: '4000',
    ...extra,
  };
}

function startWorker(name: string, extra: Record<string, string> = {}) {
  return launch(name, process.execPath, ['--import', 'tsx', 'jobs/worker.ts'], workerEnv(name, extra));
}

async function answers(port: number): Promise<boolean> {
  const a = await request(`http://127.0.0.1:${port}/sign-in`).catch(() => null);
  return a !== null && a.status > 0;
}

// --- mail ----------------------------------------------------------------------------------------

/** Message-IDs and recipients of the messages the fake stored for this run's patients. */
function storedFor(tag: string): { messageId: string | null; to: string }[] {
  const dir = path.join(process.env.LAMINA_DATA!, 'mail', 'messages');
  const out: { messageId: string | null; to: string }[] = [];
  for (const f of fs.readdirSync(dir)) {
    if (!f.endsWith('.json') || f.startsWith('.')) continue;
    let m: { messageId: string | null; envelope: { rcptTo: string[] } };
    try {
      m = JSON.parse(fs.readFileSync(path.join(dir, f), 'utf8'));
    } catch {
      continue; // being written
    }
    for (const to of m.envelope.rcptTo) if (to.includes(`.${tag}@patients.bench.invalid`)) out.push({ messageId: m.messageId, to });
  }
  return out;
}

function exactlyOnce(tag: string, n: number) {
  const stored = storedFor(tag);
  const counts = new Map<string, number>();
  for (const m of stored) counts.set(m.messageId ?? '(none)', (counts.get(m.messageId ?? '(none)') ?? 0) + 1);
  const duplicates = [...counts.values()].reduce((s, c) => s + (c > 1 ? c - 1 : 0), 0);
  const missing = n - new Set(stored.map((m) => m.to)).size;
  return { stored: stored.length, duplicates, missing };
}

async function statusCounts(knex: Knex, practiceId: string): Promise<Record<string, number>> {
  const rows = (await knex('reminder').where({ practice_id: practiceId }).groupBy('status').select('status').count('* as n')) as { status: string; n: string }[];
  return Object.fromEntries(rows.map((r) => [r.status, Number(r.n)]));
}

// --- the run ---------------------------------------------------------------------------------------

async function webChecks(knex: Knex, world: Awaited<ReturnType<typeof seedDueVisits>>): Promise<void> {
    // haproxy and the two web instances
    const [portA, portB] = [await freePort(), await freePort()];
    const cfg = path.join(WORK, 'haproxy.cfg');
    fs.writeFileSync(cfg, haproxyConfig(portA, portB));
    const valid = spawnSync('haproxy', ['-c', '-q', '-f', cfg], { encoding: 'utf8' });
    if (valid.status !== 0) throw new Error(`haproxy refused its configuration: ${valid.stderr || valid.stdout}`);
    launch('haproxy', 'haproxy', ['-db', '-f', cfg], process.env);
    for (const [name, port] of [['web-a', portA], ['web-b', portB]] as const) {
      launch(name, process.execPath, ['scripts/web-server.mjs', '-H', '127.0.0.1', '-p', String(port)], webEnv());
    }
    const t0 = Date.now();
    const up = await until(240, async () => (await answers(portA)) && (await answers(portB)) && (await answers(PROXY_PORT)), 500);
    if (!up) throw new Error(`the web instances did not answer within 240 s (logs: ${LOGS}/scale-web-*.log)`);
    log(`haproxy on ${APP_URL} → web A :${portA}, web B :${portB} (up in ${((Date.now() - t0) / 1000).toFixed(1)} s)`);

    // 1. round robin
    const served = new Set<string>();
    for (let i = 0; i < 6; i++) served.add(String((await request(`${APP_URL}/sign-in`)).headers['x-served-by']));
    check('the proxy hands requests to both web instances', served.has('a') && served.has('b'), `6 requests served by ${[...served].sort().join(' and ')}`);

    // 2 and 3. a session made on A works on B; the proxy's address is the one recorded
    const alice = new Browser('127.0.0.2', '198.51.100.77');
    const signInError = await alice.signIn(world.userEmail, PASSWORD, 'a');
    const onB = signInError ? null : await alice.go('/api/auth/session', { to: 'b' });
    const sessionEmail = onB ? ((JSON.parse(onB.body.toString()) as { user?: { email?: string } }).user?.email ?? null) : null;
    const casesOnB = signInError ? null : await alice.go(`/api/cases/${world.caseIds[0]}/films`, { to: 'b' });
    check(
      'a session made on instance A works on instance B',
      !signInError && sessionEmail === world.userEmail && casesOnB?.status === 200,
      signInError ? `sign-in on A failed: ${signInError}` : `signed in on A; on B /api/auth/session names ${sessionEmail ?? 'nobody'}, a case's films answer ${casesOnB?.status}`,
    );
    const ip = (await knex('audit_event').where({ action: 'auth.sign_in' }).andWhere('detail', '@>', JSON.stringify({ method: 'password' })).orderBy('at', 'desc').first('ip')) as { ip: string } | undefined;
    check(
      'the proxy’s X-Forwarded-For is trusted (TRUSTED_PROXIES) and a forged one is not',
      ip?.ip === '127.0.0.2',
      `client 127.0.0.2 sent X-Forwarded-For 198.51.100.77; the sign-in was recorded from ${ip?.ip ?? 'nowhere'}`,
    );

    // 4. throttling shared across instances: 6 wrong passwords, alternating A and B, each with
    // another forged address (ignored), then the right password on either instance must wait.
    const mallory = new Browser('127.0.0.3');
    const outcomes: string[] = [];
    for (let i = 0; i < 6; i++) {
      const m = new Browser('127.0.0.3', `203.0.113.${10 + i}`);
      outcomes.push((await m.signIn(world.userEmail, 'not-the-password', i % 2 ? 'b' : 'a')) ?? 'signed in');
    }
    const rightOnB = await mallory.signIn(world.userEmail, PASSWORD, 'b');
    const rightOnA = await mallory.signIn(world.userEmail, PASSWORD, 'a');
    const waits = (e: string | null) => e !== null && /Too many wrong passwords/.test(e);
    check(
      'sign-in throttling is shared by the instances (Redis)',
      outcomes.every((o) => o !== 'signed in') && waits(rightOnB) && waits(rightOnA),
      `6 wrong passwords (3 on A, 3 on B; 5 are free); then the right one on B: "${rightOnB ?? 'signed in'}"; on A: "${rightOnA ?? 'signed in'}"`,
    );

    // 8. a film uploaded through A is served by B
    const png = await sharp({ create: { width: 96, height: 64, channels: 3, background: { r: 40, g: 40, b: 40 } } })
      .composite([{ input: Buffer.from('<svg width="96" height="64"><circle cx="48" cy="32" r="20" fill="#ddd"/></svg>'), top: 0, left: 0 }])
      .png()
      .toBuffer();
    const boundary = `----scale${TAG}`;
    const multipart = Buffer.concat([
      Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="role"\r\n\r\npre_operative\r\n`),
      Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="scale.png"\r\nContent-Type: image/png\r\n\r\n`),
      png,
      Buffer.from(`\r\n--${boundary}--\r\n`),
    ]);
    const up1 = await alice.go(`/api/cases/${world.caseIds[0]}/films`, {
      method: 'POST',
      to: 'a',
      body: multipart,
      headers: { 'content-type': `multipart/form-data; boundary=${boundary}`, origin: APP_URL, 'sec-fetch-site': 'same-origin' },
    });
    let filmId: string | undefined;
    try {
      filmId = (JSON.parse(up1.body.toString()) as { film?: { id?: string } }).film?.id;
    } catch {
      /* reported below */
    }
    const down = filmId ? await alice.go(`/api/films/${filmId}/original`, { to: 'b' }) : null;
    const sha = (b: Buffer) => createHash('sha256').update(b).digest('hex').slice(0, 16);
    check(
      'a film uploaded through instance A is downloaded from instance B (one object store)',
      up1.status === 201 && down?.status === 200 && sha(down.body) === sha(png),
      `upload on A answered ${up1.status}; B served ${down ? `${down.status}, ${down.body.length} bytes, sha256 ${sha(down.body)}` : 'nothing'} (sent ${png.length} bytes, ${sha(png)})`,
    );

}

/**
 * 9. A research export started on instance A is built by a worker and downloaded from instance B:
 * a researcher joins the scale practice (its own account: check 4 left the clinician's throttled),
 * and its patients consent to research use, so the cohort has rows. Needs the web instances
 * (webChecks) and the workers running.
 */
async function exportCheck(knex: Knex, world: Awaited<ReturnType<typeof seedDueVisits>>, passwordHash: string): Promise<void> {
  const researcher = { id: randomUUID(), email: `researcher.${TAG}@scale.invalid` };
  await knex('app_user').insert({ ...researcher, name: 'Scale Researcher', password_hash: passwordHash, created_at: new Date() });
  await knex('membership').insert({ id: randomUUID(), user_id: researcher.id, practice_id: world.practiceId, role: 'researcher', granted_at: new Date() });
  await knex('patient').where({ practice_id: world.practiceId }).update({ research_use: true });
  const rita = new Browser('127.0.0.3');
  const signInError = await rita.signIn(researcher.email, PASSWORD, 'a');
  const write = { 'content-type': 'application/json', origin: APP_URL, 'sec-fetch-site': 'same-origin' };
  const post = (pathname: string, body: unknown) => rita.go(pathname, { method: 'POST', to: 'a', headers: write, body: JSON.stringify(body) });
  const parsed = (a: Answer | null): Record<string, unknown> => {
    try {
      return a ? (JSON.parse(a.body.toString()) as Record<string, unknown>) : {};
    } catch {
      return {};
    }
  };
  const cohort = signInError ? null : await post('/api/cohorts', { name: `Scale test ${TAG}` });
  const cohortId = parsed(cohort).id as string | undefined;
  const version = cohortId ? await post(`/api/cohorts/${cohortId}/versions`, { filters: {}, variables: ['age_band', 'sex'], k: 5 }) : null;
  const number = parsed(version).number as number | undefined;
  const started = number ? await post(`/api/cohorts/${cohortId}/exports`, { version: number }) : null;
  const exportId = parsed(started).id as string | undefined;
  const t0 = Date.now();
  // followed on B while a worker builds it
  const ended = exportId
    ? await until(SHORT ? 120 : 300, async () => {
        const v = parsed(await rita.go(`/api/cohort-exports/${exportId}`, { to: 'b' }));
        return v.status === 'done' || v.status === 'failed' ? v : null;
      }, 250)
    : null;
  const builtS = (Date.now() - t0) / 1000;
  const link = ended?.downloadUrl as string | undefined;
  const archive = link ? await rita.go(link, { to: 'b' }) : null;
  const zip = archive !== null && archive.status === 200 && archive.body.subarray(0, 4).equals(Buffer.from([0x50, 0x4b, 0x03, 0x04]));
  const stored = exportId ? ((await knex('cohort_export').where({ id: exportId }).first('cases', 'byte_size')) as { cases: number | null; byte_size: string | number | null } | undefined) : undefined;
  const downloads = exportId ? Number(((await knex('audit_event').where({ action: 'cohort.downloaded', entity_id: exportId }).count({ n: '*' })) as { n: string }[])[0]!.n) : 0;
  check(
    'a research export started on instance A is built by a worker and downloaded from instance B',
    !signInError && started?.status === 202 && ended?.status === 'done' && zip && archive!.body.length === Number(stored?.byte_size) && downloads === 1,
    signInError
      ? `sign-in on A failed: ${signInError}`
      : `export asked on A: ${started?.status ?? 'not sent'}; on B: ${String(ended?.status ?? 'still running')} after ${builtS.toFixed(1)} s, ${stored?.cases ?? '?'} cases; ` +
          `B served ${archive ? `${archive.status}, ${archive.body.length} bytes${zip ? ' (a zip)' : ''}` : 'nothing'} (stored ${stored?.byte_size ?? '?'} bytes); downloads audited: ${downloads}`,
  );
}

async function main(): Promise<void> {
  const orm = await MikroORM.init({ ...config, clientUrl: process.env.DATABASE_URL, pool: { min: 0, max: 3 } });
  const knex = orm.em.getKnex() as Knex;
  const redis = new Redis(process.env.REDIS_URL!, { maxRetriesPerRequest: 3 });
  const reminders = new Queue(QUEUES.reminders, { connection: redis, prefix: PREFIX });
  const scans = new Queue(QUEUES.recallScan, { connection: redis, prefix: PREFIX });
  try {
    const today = fromLocalDate(new Date());
    const passwordHash = await hashPassword(PASSWORD);
    const world = await seedDueVisits(knex, { n: N, today, tag: TAG, practiceName: 'Scale Test Endodontics', passwordHash });
    log(`seeded ${N} visits due (practice ${world.practiceId.slice(0, 8)}, tag ${TAG})`);

    if (!WORKERS_ONLY) await webChecks(knex, world);

    // 5. N reminders by two workers, exactly once
    const sendStart = Date.now();
    startWorker('worker-1');
    startWorker('worker-2');
    const done = await until(SHORT ? 120 : 900, async () => {
      const by = await statusCounts(knex, world.practiceId);
      return (by.sent ?? 0) >= N ? by : null;
    });
    const sendS = (Date.now() - sendStart) / 1000;
    const once = exactlyOnce(TAG, N);
    const completed = await reminders.getJobs(['completed'], 0, -1);
    const byWorker = new Map<string, number>();
    for (const j of completed) if (j.data && (j.data as { practiceId?: string }).practiceId === world.practiceId) byWorker.set(j.processedBy ?? '?', (byWorker.get(j.processedBy ?? '?') ?? 0) + 1);
    const split = [...byWorker].sort().map(([w, c]) => `${w} ${c}`).join(', ');
    const rate = N / sendS;
    check(
      `${N.toLocaleString('en-GB')} reminders sent by two workers arrive exactly once each`,
      done !== null && once.duplicates === 0 && once.missing === 0 && once.stored === N && byWorker.size === 2,
      `stored ${once.stored}, duplicates ${once.duplicates}, missing ${once.missing}; ${sendS.toFixed(1)} s from the workers' start (scan included), ${rate.toFixed(1)} messages/s; jobs per worker: ${split || 'none'}`,
    );
    figures.push(['reminders, two workers', `${N} in ${sendS.toFixed(1)} s = ${rate.toFixed(1)} msg/s; duplicates ${once.duplicates}, missing ${once.missing}`]);

    // 9. a research export: started on A, built by a worker, downloaded from B
    if (!WORKERS_ONLY) await exportCheck(knex, world, passwordHash);

    // 6a. one scheduler, one next hourly run, with both workers up
    const schedulers = await scans.getJobSchedulers();
    const delayed = (await scans.getJobs(['delayed'], 0, -1)).filter((j) => j.id?.startsWith(`repeat:${RECALL_SCAN_SCHEDULER_ID}:`));
    const nextHour = new Date(Math.ceil(Date.now() / 3_600_000) * 3_600_000);
    const nextRuns = delayed.map((j) => new Date(Number(j.id!.split(':').pop())));
    check(
      'the hourly scan is scheduled once, not once per worker',
      schedulers.length === 1 && schedulers[0]?.pattern === '0 * * * *' && delayed.length === 1 && nextRuns[0]?.getTime() === nextHour.getTime(),
      `${schedulers.length} job scheduler(s) (${schedulers.map((s) => `${s.key ?? s.id}: '${s.pattern}'`).join(', ')}), ${delayed.length} next run(s) at ${nextRuns.map((d) => d.toISOString()).join(', ') || '—'}`,
    );

    // 7. a worker killed with SIGKILL mid-run loses nothing
    const kill = await seedDueVisits(knex, { n: KILL_N, today, tag: `${TAG}k`, practiceName: 'Scale Test Endodontics (kill)' });
    const killStart = Date.now();
    await scans.add('recall-scan', { practiceId: kill.practiceId });
    const quarter = await until(SHORT ? 90 : 300, async () => {
      const by = await statusCounts(knex, kill.practiceId);
      return (by.sent ?? 0) >= KILL_N / 4 ? by : null;
    }, 50);
    const victim = children.get('worker-2');
    let killedAt = '';
    if (quarter && victim) {
      killedAt = `${quarter.sent} sent, ${quarter.sending ?? 0} in flight`;
      signal(victim, 'SIGKILL');
      await new Promise((r) => (victim.exitCode !== null || victim.signalCode !== null ? r(null) : victim.once('exit', r)));
      startWorker('worker-3'); // what the supervisor does: a new worker in its place
    }
    const killDone = await until(SHORT ? 120 : 600, async () => {
      const by = await statusCounts(knex, kill.practiceId);
      return (by.sent ?? 0) >= KILL_N ? by : (by.failed ?? 0) + (by.skipped ?? 0) > 0 ? by : null;
    });
    const killS = (Date.now() - killStart) / 1000;
    const killOnce = exactlyOnce(`${TAG}k`, KILL_N);
    const reconciled = Number(
      ((await knex('audit_event').where({ practice_id: kill.practiceId, action: 'recall.reminder_sent' }).andWhere('detail', '@>', JSON.stringify({ how: 'reconciled' })).count('* as n').first()) as { n: string }).n,
    );
    const resent = Number(
      ((await knex('audit_event').where({ practice_id: kill.practiceId, action: 'recall.reminder_sent' }).andWhere('detail', '@>', JSON.stringify({ how: 'resent' })).count('* as n').first()) as { n: string }).n,
    );
    check(
      'a worker killed with SIGKILL mid-run loses nothing',
      Boolean(quarter && victim) && (killDone?.sent ?? 0) === KILL_N && killOnce.duplicates === 0 && killOnce.missing === 0 && killOnce.stored === KILL_N,
      `${KILL_N} reminders; worker-2 killed at ${killedAt || '(never)'}; all sent after ${killS.toFixed(1)} s: stored ${killOnce.stored}, duplicates ${killOnce.duplicates}, missing ${killOnce.missing}; ${reconciled} found already delivered (delivery check), ${resent} sent again after the lease`,
    );
    figures.push(['worker killed mid-run', `${KILL_N} in ${killS.toFixed(1)} s; duplicates ${killOnce.duplicates}, missing ${killOnce.missing}, reconciled ${reconciled}`]);

    // 6b. with a two-second schedule and both workers, every slot runs once
    await Promise.all([stop('worker-1'), stop('worker-3')]);
    const fast = { RECALL_SCAN_PATTERN: '*/2 * * * * *', RECALL_SCAN_ON_START: '0' };
    const logSize = (n: string) => (fs.existsSync(path.join(LOGS, `scale-${n}.log`)) ? fs.statSync(path.join(LOGS, `scale-${n}.log`)).size : 0);
    const from = { 'worker-4': logSize('worker-4'), 'worker-5': logSize('worker-5') };
    const startedLine = (n: 'worker-4' | 'worker-5') => fs.readFileSync(path.join(LOGS, `scale-${n}.log`), 'utf8').slice(from[n]).includes('[worker] started');
    startWorker('worker-4', fast);
    startWorker('worker-5', fast);
    // Watch only once both run (starting takes a while on a busy machine).
    await until(180, async () => startedLine('worker-4') && startedLine('worker-5'), 250);
    const watchFrom = Date.now();
    const watchS = SHORT ? 9 : 21;
    await sleep(watchS * 1000); // observing a schedule: the wait IS the measurement
    await Promise.all([stop('worker-4'), stop('worker-5')]);
    const ran = (await scans.getJobs(['completed', 'failed', 'active'], 0, -1)).filter(
      (j) => j.id?.startsWith(`repeat:${RECALL_SCAN_SCHEDULER_ID}:`) && Number(j.id.split(':').pop()) >= watchFrom,
    );
    const slots = new Map<number, number>();
    for (const j of ran) {
      const slot = Number(j.id!.split(':').pop());
      slots.set(slot, (slots.get(slot) ?? 0) + 1);
    }
    const twice = [...slots.values()].filter((c) => c > 1).length;
    const runners = new Set(ran.map((j) => j.processedBy ?? '?'));
    const maxSlots = Math.floor(watchS / 2) + 2;
    check(
      'a scheduled slot runs once with two workers (BullMQ job scheduler)',
      ran.length >= 2 && twice === 0 && ran.length === slots.size && ran.length <= maxSlots,
      `schedule every 2 s for ${watchS} s: ${ran.length} scans in ${slots.size} slots (at most ${maxSlots} possible), ${twice} slot(s) run twice; run by ${[...runners].sort().join(' and ')}`,
    );
    figures.push(['scheduled scans', `${ran.length} in ${slots.size} two-second slots, 0 expected twice (found ${twice})`]);
  } finally {
    await stopAll();
    await reminders.close();
    await scans.close();
    // Leave Redis as found: this run's queues only.
    const keys = await redis.keys(`${PREFIX}:*`);
    for (let i = 0; i < keys.length; i += 500) await redis.del(...keys.slice(i, i + 500));
    redis.disconnect();
    await orm.close(true);
  }
}

function writeReport(file: string, error?: string) {
  const failed = checks.filter((c) => !c.ok).length + (error ? 1 : 0);
  const assertionResults = checks.map((c) => ({ title: c.title, fullName: `scale test > ${c.title}`, status: c.ok ? 'passed' : 'failed', failureMessages: c.ok ? [] : [c.detail] }));
  if (error) assertionResults.push({ title: 'the scale test ran to the end', fullName: 'scale test > the scale test ran to the end', status: 'failed', failureMessages: [error] });
  const report = {
    numTotalTests: assertionResults.length,
    numPassedTests: assertionResults.length - failed,
    numFailedTests: failed,
    success: failed === 0,
    testResults: [{ name: path.join(repo, 'scripts/scale-test.ts'), status: failed ? 'failed' : 'passed', message: error ?? '', assertionResults }],
  };
  fs.writeFileSync(file, JSON.stringify(report, null, 2));
}

const exitSignals = ['SIGINT', 'SIGTERM'] as const;
for (const s of exitSignals) {
  process.on(s, () => {
    void stopAll().finally(() => process.exit(130));
  });
}

let fatal: string | undefined;
const started = Date.now();
try {
  await main();
} catch (e) {
  fatal = (e as Error).stack ?? String(e);
  console.error(`FAIL  the scale test stopped: ${(e as Error).message}`);
} finally {
  await stopAll();
  fs.rmSync(WORK, { recursive: true, force: true });
}
if (args.report) writeReport(args.report, fatal);
const failed = checks.filter((c) => !c.ok).length + (fatal ? 1 : 0);
console.log(`\nscale test (${SHORT ? 'short' : 'full'}): ${checks.length - checks.filter((c) => !c.ok).length} passed, ${failed} failed in ${((Date.now() - started) / 1000).toFixed(0)} s`);
for (const [k, v] of figures) console.log(`  ${k}: ${v}`);
process.exit(failed ? 1 : 0);

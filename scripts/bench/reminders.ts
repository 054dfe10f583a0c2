/**
 * Benchmark: 10,000 reminders end to end — visits due in PostgreSQL, the real worker process
 * (jobs/worker.ts) scanning, queueing in Redis, rendering and sending over SMTP to the local
 * fake — with the throughput, the worker's peak memory and the number of duplicates (must be 0).
 *
 * Run by scripts/bench.sh (throwaway PostgreSQL, Redis and SMTP fake; DATABASE_URL, REDIS_URL,
 * SMTP_URL, MAILBOX_URL and LAMINA_DATA exported). BENCH_REMINDERS (default 10000),
 * BENCH_CONCURRENCY (the worker's WORKER_CONCURRENCY, its default when unset), SMTP_MAX_CONNECTIONS
 * (default: the concurrency) and BENCH_WORKERS (worker processes on one queue, default 1; pool and
 * concurrency are per process) change the size; BENCH_WORKER_NODE_ARGS adds Node flags to the
 * worker (e.g. `--cpu-prof --cpu-prof-dir=DIR`). Also printed: the CPU time per message of the
 * worker(s), the mail fake, PostgreSQL and Redis while sending. Exits 1 if a reminder is missing
 * or duplicated.
 */
import { spawn } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import { MikroORM } from '@mikro-orm/postgresql';
import type { Knex } from '@mikro-orm/knex';
import config from '../../mikro-orm.config';
import { fromLocalDate } from '../../lib/registry/calendar-date';
import { seedDueVisits } from '../lib/reminder-seed';
import { cpuBetween, cpuSnapshot, readStatements, serviceGroups, statementsWanted, topStatements, vm, type CpuSnapshot, type Statements } from '../lib/bench-proc';
import { mailboxHeaders } from '../../lib/mail/mailbox-secret';
import { readWorkerConfig, smtpPoolOf } from '../../jobs/config';

const N = Number(process.env.BENCH_REMINDERS ?? 10_000);
// The worker's own settings (jobs/config.ts): its defaults unless BENCH_CONCURRENCY / SMTP_MAX_CONNECTIONS say otherwise.
const workerConfig = readWorkerConfig({ WORKER_CONCURRENCY: process.env.BENCH_CONCURRENCY, SMTP_MAX_CONNECTIONS: process.env.SMTP_MAX_CONNECTIONS });
const CONCURRENCY = workerConfig.concurrency;
const WORKERS = Number(process.env.BENCH_WORKERS ?? 1);
if (!Number.isInteger(WORKERS) || WORKERS < 1 || WORKERS > 8) throw new Error('BENCH_WORKERS: 1 to 8 worker processes');
const repo = path.resolve(import.meta.dirname, '../..');
const mailboxUrl = process.env.MAILBOX_URL;
if (!process.env.DATABASE_URL || !process.env.REDIS_URL || !process.env.SMTP_URL || !mailboxUrl) {
  console.error('bench/reminders: run through scripts/bench.sh (needs DATABASE_URL, REDIS_URL, SMTP_URL, MAILBOX_URL)');
  process.exit(2);
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

async function seed(knex: Knex, today: string): Promise<void> {
  await seedDueVisits(knex, { n: N, today, tag: randomBytes(3).toString('hex') });
}

/**
 * The processes of this run whose CPU time is counted per message: the worker, the mail fake (its
 * pid from /health), PostgreSQL (postmaster and backends, from its pid file) and Redis (pid file).
 */
async function processGroups(workerPids: number[]): Promise<Record<string, number[]>> {
  const health = (await fetch(new URL('/health', mailboxUrl)).then((r) => r.json()).catch(() => null)) as { pid?: number } | null;
  return { worker: workerPids, 'mail fake': health?.pid ? [health.pid] : [], ...serviceGroups() };
}

/** Message-IDs and recipients the fake stored: from its directory when known (fast), else its API. */
async function storedMessages(): Promise<{ messageId: string | null; rcptTo: string[] }[]> {
  const dir = process.env.LAMINA_DATA ? path.join(process.env.LAMINA_DATA, 'mail', 'messages') : null;
  if (dir && fs.existsSync(dir)) {
    return fs
      .readdirSync(dir)
      .filter((f) => f.endsWith('.json') && !f.startsWith('.'))
      .map((f) => {
        const m = JSON.parse(fs.readFileSync(path.join(dir, f), 'utf8')) as { messageId: string | null; envelope: { rcptTo: string[] } };
        return { messageId: m.messageId, rcptTo: m.envelope.rcptTo };
      });
  }
  const res = await fetch(new URL(`/messages?limit=10000`, mailboxUrl), { headers: mailboxHeaders(process.env.MAILBOX_SECRET) });
  return ((await res.json()) as { messageId: string | null; envelope: { rcptTo: string[] } }[]).map((m) => ({ messageId: m.messageId, rcptTo: m.envelope.rcptTo }));
}


async function main() {
  const orm = await MikroORM.init({ ...config, clientUrl: process.env.DATABASE_URL, pool: { min: 0, max: 2 } });
  const knex = orm.em.getKnex() as Knex;
  try {
    const today = fromLocalDate(new Date());
    const t0 = performance.now();
    await seed(knex, today);
    const seedS = (performance.now() - t0) / 1000;
    await fetch(new URL('/messages', mailboxUrl), { method: 'DELETE', headers: mailboxHeaders(process.env.MAILBOX_SECRET) });

    // BENCH_WORKERS worker processes (default 1) on one queue, as a deployment may run them; the
    // first scans at start.
    const prefix = `lamina-bench-${randomBytes(3).toString('hex')}`;
    const children = Array.from({ length: WORKERS }, (_, i) =>
      spawn(process.execPath, [...(process.env.BENCH_WORKER_NODE_ARGS ? process.env.BENCH_WORKER_NODE_ARGS.split(' ') : []), '--import', 'tsx', 'jobs/worker.ts'], {
        cwd: repo,
        env: {
          ...process.env,
          TSX_TSCONFIG_PATH: 'scripts/tsconfig.json',
          QUEUE_PREFIX: prefix,
          WORKER_NAME: `bench-${i + 1}`,
          WORKER_CONCURRENCY: String(CONCURRENCY),
          SMTP_MAX_CONNECTIONS: String(smtpPoolOf(workerConfig)),
          RECALL_SCAN_ON_START: i === 0 ? '1' : '0',
        },
        stdio: ['ignore', 'pipe', 'pipe'],
      }),
    );
    let log = '';
    for (const child of children) {
      child.stdout.on('data', (d: Buffer) => (log += d.toString()));
      child.stderr.on('data', (d: Buffer) => (log += d.toString()));
    }
    const exited = Promise.all(children.map((child) => new Promise<number | null>((r) => child.on('exit', (code) => r(code)))));
    const pids = children.map((c) => c.pid!);
    const started = performance.now();

    let queuedAt: number | null = null;
    let firstSentAt: number | null = null;
    let peak = { hwm: 0, rss: 0 };
    let cpuAtFirst: CpuSnapshot | null = null;
    let sentAtFirst = 0;
    let statementsAtFirst: Statements | null = null;
    const deadline = started + 30 * 60_000;
    for (;;) {
      const rows = (await knex('reminder').groupBy('status').select('status').count('* as n')) as { status: string; n: string }[];
      const by = Object.fromEntries(rows.map((r) => [r.status, Number(r.n)]));
      const total = Object.values(by).reduce((a, b) => a + b, 0);
      if (queuedAt === null && total >= N) queuedAt = performance.now();
      if (firstSentAt === null && (by.sent ?? 0) > 0) {
        firstSentAt = performance.now();
        if (statementsWanted) statementsAtFirst = await readStatements(knex);
        cpuAtFirst = cpuSnapshot(await processGroups(pids));
        sentAtFirst = by.sent ?? 0;
      }
      for (const pid of pids) {
        const v = vm(pid);
        if (v) peak = { hwm: Math.max(peak.hwm, v.hwm), rss: Math.max(peak.rss, v.rss) };
      }
      if ((by.sent ?? 0) >= N) break;
      if ((by.failed ?? 0) + (by.skipped ?? 0) > 0 || children.some((c) => c.exitCode !== null) || performance.now() > deadline) {
        console.error(`bench/reminders: stopped early: ${JSON.stringify(by)}, worker exit ${children.map((c) => c.exitCode).join(', ')}\n${log.slice(-3000)}`);
        for (const c of children) c.kill('SIGKILL');
        process.exitCode = 1;
        return;
      }
      await sleep(100);
    }
    const done = performance.now();
    const cpuAtDone = cpuSnapshot(await processGroups(pids));
    const statements = statementsAtFirst ? topStatements(statementsAtFirst, await readStatements(knex)) : null;
    for (const pid of pids) {
      const final = vm(pid);
      if (final) peak = { hwm: Math.max(peak.hwm, final.hwm), rss: Math.max(peak.rss, final.rss) };
    }
    for (const c of children) c.kill('SIGTERM');
    const codes = await exited;

    const stored = await storedMessages();
    const counts = new Map<string, number>();
    for (const m of stored) counts.set(m.messageId ?? '(none)', (counts.get(m.messageId ?? '(none)') ?? 0) + 1);
    const duplicates = [...counts.values()].reduce((n, c) => n + (c > 1 ? c - 1 : 0), 0);
    const recipients = new Set(stored.flatMap((m) => m.rcptTo));
    const rowsSent = Number(((await knex('reminder').where({ status: 'sent' }).count('* as n').first()) as { n: string }).n);
    const missing = N - recipients.size;

    const s = (ms: number) => `${(ms / 1000).toFixed(1)} s`;
    const sendMs = done - (firstSentAt ?? started);
    const table: [string, string][] = [
      ['reminders (visits due, one practice)', N.toLocaleString('en-GB')],
      ['worker processes × concurrency / SMTP pool', `${WORKERS} × ${CONCURRENCY} / ${smtpPoolOf(workerConfig)}`],
      ['seed (patients, cases, visits)', `${seedS.toFixed(1)} s`],
      ['worker start → all 10,000 rows queued (scan)'.replace('10,000', N.toLocaleString('en-GB')), queuedAt ? s(queuedAt - started) : '—'],
      ['first message → last message', s(sendMs)],
      ['end to end (worker start → last message)', s(done - started)],
      ['throughput, sending', `${(N / (sendMs / 1000)).toFixed(1)} messages/s`],
      ['throughput, end to end', `${(N / ((done - started) / 1000)).toFixed(1)} messages/s`],
      [
        'CPU per message while sending (ms)',
        cpuAtFirst ? cpuBetween(cpuAtFirst, cpuAtDone).map(([g, ms]) => `${g} ${(ms / Math.max(1, N - sentAtFirst)).toFixed(2)}`).join(', ') : '—',
      ],
      [WORKERS > 1 ? 'worker peak RSS (VmHWM, the larger)' : 'worker peak RSS (VmHWM)', `${(peak.hwm / 1024).toFixed(0)} MB`],
      ['messages stored by the SMTP fake', stored.length.toLocaleString('en-GB')],
      ['outbox rows sent', rowsSent.toLocaleString('en-GB')],
      ['duplicates (same Message-ID twice)', String(duplicates)],
      ['missing (patients without a message)', String(missing)],
      ['worker exit after SIGTERM', codes.join(', ')],
    ];
    const w = Math.max(...table.map(([k]) => k.length));
    console.log(`\nreminders end to end — real worker, PostgreSQL, Redis, SMTP fake\n`);
    console.log(`| ${'measure'.padEnd(w)} | value |`);
    console.log(`| ${'-'.repeat(w)} | ----- |`);
    for (const [k, v] of table) console.log(`| ${k.padEnd(w)} | ${v} |`);
    if (statements) console.log(`\nPostgreSQL statements while sending (pg_stat_statements), by total time:\n${statements}`);
    if (duplicates !== 0 || missing !== 0 || rowsSent !== N || stored.length !== N) process.exitCode = 1;
  } finally {
    await orm.close(true);
  }
}

await main();

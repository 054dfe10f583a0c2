import { spawn, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import net from 'node:net';
import { afterAll, afterEach, beforeEach, describe, expect, it } from 'vitest';
import { todayIn } from '@/lib/services/registry-common';
import { makeRegistryPractice, openServices, resetData } from '../support/db';
import { clearMailbox, hangSmtp, mailbox, mailboxCount, outboxCounts, refuseSmtp, seedVisits, sleep, smtpHanging, spawnWorker, waitFor, type WorkerChild } from './recall-fixtures';

/**
 * Fault tests with the real worker process (jobs/worker.ts as a child, as npm start runs it):
 *   1. SIGKILL in the middle of 1,000 reminders, then a restart: each arrives exactly once
 *   2. the SMTP relay refuses for a while: the refused ones are retried and all arrive, once
 *   3. Redis restarts empty in the middle of a run: the scan re-queues from the outbox, nothing lost
 *   4. the SMTP relay takes the message and never answers: the attempt times out (SMTP_TIMEOUT_MS),
 *      is retried, and once the relay answers again each reminder arrives once, none left 'sending'
 * Each counts the messages the SMTP fake stored by Message-ID and by recipient.
 */
const services = await openServices();
const knex = () => services.em().getKnex();
const today = todayIn('Europe/London');
const children: ChildProcess[] = [];

afterAll(() => services.close());
beforeEach(async () => {
  await resetData(services.orm, services.redis);
  await clearMailbox();
  await refuseSmtp(0);
  await hangSmtp(0);
});
afterEach(async () => {
  for (const c of children.splice(0)) if (c.exitCode === null && c.signalCode === null) c.kill('SIGKILL');
  await refuseSmtp(0);
  await hangSmtp(0);
});

/** Short waits for tests: 2 s locks (a killed worker's jobs come back within about 4 s), 100 ms first retry. */
function workerEnv(prefix: string, extra: Record<string, string> = {}) {
  return {
    QUEUE_PREFIX: prefix,
    WORKER_CONCURRENCY: '8',
    WORKER_LOCK_MS: '2000',
    SMTP_TIMEOUT_MS: '1500',
    REMINDER_BACKOFF_MS: '100',
    REMINDER_ATTEMPTS: '8',
    RECALL_SCAN_ON_START: '1',
    ...extra,
  };
}

function start(env: Record<string, string>): WorkerChild {
  const w = spawnWorker(env);
  children.push(w.proc);
  return w;
}

async function seed(n: number) {
  const p = await makeRegistryPractice(services.em(), `fault${randomBytes(3).toString('hex')}`);
  return seedVisits(services.em(), p.practice.id, p.clinician.userId, today, Array.from({ length: n }, (_, i) => ({ dueIn: 7 + (i % 14) })), 'f');
}

async function allSent(n: number, timeoutMs: number) {
  return waitFor(`${n} reminders sent`, async () => ((await outboxCounts(services.em())).sent ?? 0) === n, timeoutMs, 250);
}

/** Every seeded patient got exactly one message, and every message belongs to an outbox row. */
async function expectExactlyOnce(visits: { email: string | null }[]) {
  const messages = await mailbox();
  const byMessageId = new Map<string, number>();
  for (const m of messages) byMessageId.set(m.messageId ?? '(none)', (byMessageId.get(m.messageId ?? '(none)') ?? 0) + 1);
  const duplicates = [...byMessageId.values()].filter((n) => n > 1).length;
  const recipients = new Set(messages.flatMap((m) => m.envelope.rcptTo));
  const rows = (await knex()('reminder').select('message_id', 'status')) as { message_id: string | null; status: string }[];
  expect({ messages: messages.length, distinctMessageIds: byMessageId.size, duplicates }).toEqual({ messages: visits.length, distinctMessageIds: visits.length, duplicates: 0 });
  expect(recipients.size).toBe(visits.length);
  for (const v of visits) expect(recipients.has(v.email!)).toBe(true);
  expect(new Set(rows.map((r) => r.message_id))).toEqual(new Set(byMessageId.keys()));
  expect(rows.every((r) => r.status === 'sent')).toBe(true);
}

async function stop(w: WorkerChild) {
  w.proc.kill('SIGTERM');
  return Promise.race([w.exited, sleep(15_000).then(() => ({ code: -1, signal: null }))]);
}

describe('recall faults', () => {
  it('(1) the worker killed with SIGKILL while sending 1,000 reminders, then restarted: each arrives exactly once', async () => {
    const t0 = Date.now();
    const visits = await seed(1000);
    const prefix = `lamina-test-kill-${randomBytes(3).toString('hex')}`;
    const first = start(workerEnv(prefix));
    const atKill = await waitFor('the first 250 messages', async () => {
      const n = await mailboxCount();
      return n >= 250 ? n : false;
    }, 120_000, 50); // a deadline for a loaded machine (issue 15)
    first.proc.kill('SIGKILL');
    await first.exited;
    const stuck = (await outboxCounts(services.em())).sending ?? 0;
    const second = start(workerEnv(prefix));
    await allSent(1000, 150_000);
    const exit = await stop(second);
    await expectExactlyOnce(visits);
    const out = second.output();
    const reconciled = (out.match(/Message-ID found/g) ?? []).length;
    const resent = (out.match(/sending again under the same Message-ID/g) ?? []).length;
    console.log(`fault (1): killed after ${atKill} messages with ${stuck} claim(s) open; the restart found ${reconciled} already delivered and sent ${resent} again; ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    expect(exit).toEqual({ code: 0, signal: null });
  }, 330_000);

  it('(2) the SMTP fake refuses for a while: the messages are retried and all arrive, once', async () => {
    const t0 = Date.now();
    const visits = await seed(120);
    await refuseSmtp(60);
    const w = start(workerEnv(`lamina-test-refuse-${randomBytes(3).toString('hex')}`));
    await allSent(120, 120_000);
    const exit = await stop(w);
    await expectExactlyOnce(visits);
    const attempts = (await knex()('reminder').sum('attempts as n').first()) as { n: string };
    // Each refusal cost one attempt of some reminder, and nothing else did.
    expect(Number(attempts.n)).toBe(120 + 60);
    expect(await knex()('reminder').where('attempts', '>', 1).count('* as n').first()).not.toMatchObject({ n: '0' });
    expect(await knex()('recall_visit').whereNotNull('delivery_failed_at').count('* as n').first()).toMatchObject({ n: '0' });
    expect(w.output()).toMatch(/refused the message for now \(451\)/);
    console.log(`fault (2): 60 refusals ridden out, 120 delivered once each; ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    expect(exit).toEqual({ code: 0, signal: null });
  }, 180_000);

  it('(3) Redis restarted empty in the middle of a run: the scan re-queues from the outbox and nothing is lost', async () => {
    const t0 = Date.now();
    const port = await freePort();
    const redis = () => {
      const r = spawn('redis-server', ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'], { stdio: 'ignore' });
      children.push(r);
      return r;
    };
    let server = redis();
    await waitFor('the test Redis', () => canConnect(port), 10_000, 100);
    const visits = await seed(400);
    const w = start(workerEnv(`lamina-test-redis-${randomBytes(3).toString('hex')}`, { REDIS_URL: `redis://127.0.0.1:${port}`, WORKER_CONCURRENCY: '4' }));
    const before = await waitFor('the first 60 messages', async () => {
      const n = await mailboxCount();
      return n >= 60 ? n : false;
    }, 120_000, 50); // a deadline for a loaded machine (issue 15)
    // Redis goes away with every job and the scan's scheduler, and comes back empty.
    server.kill('SIGKILL');
    await new Promise((r) => server.once('exit', r));
    await sleep(1000);
    server = redis();
    await waitFor('Redis back', () => canConnect(port), 10_000, 100);
    await allSent(400, 150_000);
    const exit = await stop(w);
    await expectExactlyOnce(visits);
    expect(w.output()).toMatch(/re-queued/);
    const requeued = [...w.output().matchAll(/(\d+) re-queued/g)].map((m) => Number(m[1]));
    console.log(`fault (3): Redis restarted after ${before} messages; the scan re-queued ${Math.max(...requeued)} reminder(s); ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    expect(Math.max(...requeued)).toBeGreaterThan(0);
    expect(exit).toEqual({ code: 0, signal: null });
    server.kill('SIGTERM');
  }, 330_000);

  it('(4) the SMTP relay takes messages and never answers: each attempt times out, is retried, and every reminder arrives once', async () => {
    const t0 = Date.now();
    const hangs = 12;
    const visits = await seed(100);
    await hangSmtp(hangs);
    const w = start(workerEnv(`lamina-test-hang-${randomBytes(3).toString('hex')}`));
    // The relay answers again only after every hung transaction has been timed out by the worker.
    try {
      await waitFor('every hung transaction used', async () => (await smtpHanging()) === 0, 120_000, 100);
      await allSent(100, 150_000);
    } catch (e) {
      throw new Error(`${(e as Error).message}; the worker said: ${w.output().slice(-1500)}`);
    }
    const exit = await stop(w);
    await expectExactlyOnce(visits);
    const counts = await outboxCounts(services.em());
    expect(counts.sending ?? 0).toBe(0);
    const attempts = (await knex()('reminder').sum('attempts as n').first()) as { n: string };
    // Each unanswered transaction cost one attempt of some reminder (its timeout), and nothing else did.
    expect(Number(attempts.n)).toBe(100 + hangs);
    expect(await knex()('recall_visit').whereNotNull('delivery_failed_at').count('* as n').first()).toMatchObject({ n: '0' });
    console.log(`fault (4): ${hangs} unanswered transactions timed out and retried, 100 delivered once each; ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    expect(exit).toEqual({ code: 0, signal: null });
  }, 300_000);
});

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = net.createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const { port } = s.address() as net.AddressInfo;
      s.close(() => resolve(port));
    });
  });
}

function canConnect(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const c = net.connect({ host: '127.0.0.1', port });
    c.once('connect', () => {
      c.write('PING\r\n');
    });
    c.once('data', (d) => {
      c.destroy();
      resolve(d.toString().startsWith('+PONG'));
    });
    c.once('error', () => resolve(false));
  });
}

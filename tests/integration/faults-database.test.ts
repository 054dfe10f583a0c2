import { execFile } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import path from 'node:path';
import { promisify } from 'node:util';
import { afterAll, afterEach, describe, expect, it } from 'vitest';
import { errorResponse } from '@/lib/http';
import { createCase } from '@/lib/services/cases';
import { createPatient } from '@/lib/services/patients';
import { todayIn } from '@/lib/services/registry-common';
import { RETRY_AFTER_SECONDS } from '@/lib/services/unavailable';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { clearMailbox, mailbox, outboxCounts, refuseSmtp, seedVisits, spawnWorker, waitFor, type WorkerChild } from './recall-fixtures';

/**
 * Issue 15, faults: PostgreSQL stopped and started again (a fast shutdown, as a managed database's
 * restart or fail-over does) while requests and the worker are busy.
 * - Requests in flight get a clear 503 with a Retry-After hint (lib/services/unavailable.ts through
 *   lib/http.ts errorResponse), never a 500; nothing is half-written (a case and its planned visits
 *   are one transaction); the same process serves again once the database is back (the pool
 *   reconnects; no restart of the app).
 * - The worker keeps running: its jobs fail while the database is away, are retried, and every
 *   reminder arrives exactly once (counted by Message-ID at the SMTP fake).
 * The test's own PostgreSQL (scripts/test.sh's throwaway server) is stopped and started with the
 * same shell helpers npm test uses (scripts/lib/services.sh pg_stop / pg_start).
 */
const services = await openServices();
const knex = () => services.em().getKnex();
const today = todayIn('Europe/London');
const repo = path.resolve(import.meta.dirname, '../..');
const run = promisify(execFile);
const children: WorkerChild[] = [];

const pg = (fn: 'pg_stop' | 'pg_start') => run('bash', ['-c', `source scripts/lib/services.sh && ${fn}`], { cwd: repo, env: process.env, timeout: 90_000 });

afterEach(async () => {
  for (const w of children.splice(0)) if (w.proc.exitCode === null && w.proc.signalCode === null) w.proc.kill('SIGKILL');
  await pg('pg_start'); // never leave the suite without its database
  await waitFor('the database back', () => services.em().getConnection().execute('select 1').then(() => true, () => false), 60_000, 200);
});
afterAll(() => services.close());

/** A service call as a route answers it: its value, or the status and headers errorResponse gives. */
async function asResponse(fn: () => Promise<unknown>): Promise<{ status: number; retryAfter: string | null; error?: string; thrown?: string }> {
  try {
    await fn();
    return { status: 200, retryAfter: null };
  } catch (e) {
    const r = errorResponse(e);
    const answer = { status: r.status, retryAfter: r.headers.get('retry-after'), error: ((await r.json()) as { error: string }).error };
    // anything but the 503 carries what was thrown, so a failure names the error to recognise
    return r.status === 503 ? answer : { ...answer, thrown: `${(e as Error)?.name}: ${(e as Error)?.message}` };
  }
}

describe('PostgreSQL restarted under load (issue 15, faults)', () => {
  it('requests in flight get a 503 with a retry hint, nothing is half-written, and the same process recovers', async () => {
    await resetData(services.orm, services.redis);
    const world = await makeRegistryPractice(services.em(), `pgfault${randomBytes(2).toString('hex')}`);
    const patient = await createPatient(services.em(), world.clinician, patientInput({ registryNumber: 'PG-1' }));
    const write = () => createCase(services.em(), world.clinician, caseInput(patient.id, world.clinician.userId, { completionDate: today, startDate: today }));
    await write(); // the invariant's reference: how many visits a case is planned with
    const plannedPerCase = Number(((await knex()('recall_visit').count('* as n')) as { n: string }[])[0]!.n);
    expect(plannedPerCase).toBeGreaterThan(0);

    // a stream of writes, two at a time, while the database goes away and comes back
    let stop = false;
    const results: Awaited<ReturnType<typeof asResponse>>[] = [];
    const writer = async () => {
      while (!stop) results.push(await asResponse(write));
    };
    const writers = [writer(), writer()];
    await waitFor('a few writes before the fault', async () => results.length >= 4, 30_000, 20);
    await pg('pg_stop');
    await waitFor('writes refused while the database is away', async () => results.filter((r) => r.status !== 200).length >= 3, 30_000, 20);
    await pg('pg_start');
    await waitFor('writes succeeding again', async () => results.slice(-3).every((r) => r.status === 200) && results.length > 10, 60_000, 50);
    stop = true;
    await Promise.all(writers);

    const ok = results.filter((r) => r.status === 200).length;
    const refused = results.filter((r) => r.status !== 200);
    console.log(`fault (database): ${results.length} writes, ${ok} saved, ${refused.length} answered ${[...new Set(refused.map((r) => r.status))].join('/')}`);
    expect(refused.length).toBeGreaterThan(0);
    for (const r of refused) expect(r).toEqual({ status: 503, retryAfter: String(RETRY_AFTER_SECONDS), error: 'unavailable' });

    // nothing half-written: every case has all its planned visits; saved cases are the answered ones
    const perCase = (await knex()('treatment_case as c').leftJoin('recall_visit as v', 'v.case_id', 'c.id').groupBy('c.id').select('c.id').count('v.id as n')) as { n: string }[];
    expect(new Set(perCase.map((r) => Number(r.n)))).toEqual(new Set([plannedPerCase]));
    // a write whose commit reached the server just as it stopped may be saved and still answered 503: at most one per writer
    expect(perCase.length - 1).toBeGreaterThanOrEqual(ok);
    expect(perCase.length - 1).toBeLessThanOrEqual(ok + 2);
  }, 180_000);

  it('the worker waits for the database and resumes: every reminder arrives exactly once', async () => {
    await resetData(services.orm, services.redis);
    await clearMailbox();
    await refuseSmtp(0);
    const world = await makeRegistryPractice(services.em(), `pgworker${randomBytes(2).toString('hex')}`);
    const visits = await seedVisits(services.em(), world.practice.id, world.clinician.userId, today, Array.from({ length: 200 }, (_, i) => ({ dueIn: 7 + (i % 14) })), 'pg');
    const w = spawnWorker({
      QUEUE_PREFIX: `lamina-test-pg-${randomBytes(3).toString('hex')}`,
      WORKER_CONCURRENCY: '4',
      WORKER_LOCK_MS: '2000',
      SMTP_TIMEOUT_MS: '1500',
      REMINDER_BACKOFF_MS: '200',
      REMINDER_ATTEMPTS: '20',
      RECALL_SCAN_ON_START: '1',
    });
    children.push(w);
    await waitFor('the first 30 messages', async () => (await mailbox()).length >= 30, 90_000, 100).catch((e: unknown) => {
      throw new Error(`${(e as Error).message}; worker output:\n${w.output().slice(-3000)}`);
    });
    await pg('pg_stop');
    // the database stays away until jobs have failed on it (and are retried)
    await waitFor('a job failing on the missing database', async () => /attempt \d+ of \d+ failed, retrying/.test(w.output()), 60_000, 100);
    await pg('pg_start');
    await waitFor('200 reminders sent', async () => {
      try {
        return ((await outboxCounts(services.em())).sent ?? 0) === 200;
      } catch {
        return false;
      }
    }, 240_000, 500);
    const messages = await mailbox();
    const ids = new Map<string, number>();
    for (const m of messages) ids.set(m.messageId ?? '(none)', (ids.get(m.messageId ?? '(none)') ?? 0) + 1);
    const duplicates = [...ids.values()].filter((n) => n > 1).length;
    const recipients = new Set(messages.flatMap((m) => m.envelope.rcptTo));
    console.log(`fault (database, worker): ${messages.length} messages for ${visits.length} visits, ${duplicates} duplicates`);
    expect({ messages: messages.length, duplicates, recipients: recipients.size }).toEqual({ messages: 200, duplicates: 0, recipients: 200 });
    expect(w.proc.exitCode).toBeNull(); // it kept running: no restart of its own
  }, 360_000);
});

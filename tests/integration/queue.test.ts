import { randomBytes } from 'node:crypto';
import { Worker, type Job } from 'bullmq';
import type { Redis } from 'ioredis';
import { afterAll, afterEach, beforeAll, describe, expect, test, vi } from 'vitest';
import {
  JOBS,
  QUEUES,
  connectionForProducer,
  connectionForWorker,
  enqueueReminder,
  enqueueReminders,
  evictionPolicy,
  openRecallScanQueue,
  openRemindersQueue,
  parseJobData,
  upsertRecallScanScheduler,
  whenReady,
  type RemindersQueue,
  type SendReminderData,
} from '@/lib/queue';
import { reminderJobId } from '@/lib/recall/reminders';

/**
 * The queue layer on the real Redis at REDIS_URL (BullMQ does not run on ioredis-mock). Every
 * run uses its own key prefix, so it neither sees nor disturbs other tests' queues.
 */
const url = process.env.REDIS_URL!;
const prefix = `lamina-test-${randomBytes(4).toString('hex')}`;
const uuid = (n: number) => `00000000-0000-4000-8000-${String(n).padStart(12, '0')}`;
const practiceId = uuid(1);

let producer: Redis;
let queue: RemindersQueue;
const logged: string[] = [];
const opened: { close(): Promise<unknown> }[] = [];
const connections: Redis[] = [];
/** A worker connection, disconnected after the test (BullMQ does not close a connection it was given). */
const workerConnection = () => {
  const c = connectionForWorker(url, { name: 'test-worker', log: (m) => logged.push(m) });
  connections.push(c);
  return c;
};

async function allJobs(q: RemindersQueue) {
  return q.getJobs(['waiting', 'delayed', 'active', 'completed', 'failed', 'prioritized', 'waiting-children']);
}

beforeAll(async () => {
  producer = await whenReady(connectionForProducer(url, { name: 'test-producer', log: (m) => logged.push(m) }));
  queue = openRemindersQueue(producer, { prefix, failFast: true });
});

afterEach(async () => {
  await Promise.all(opened.splice(0).map((o) => o.close()));
  for (const c of connections.splice(0)) c.disconnect();
  await queue.obliterate({ force: true });
});

afterAll(async () => {
  await queue.close();
  producer.disconnect();
});

describe('the reminders queue on real Redis', () => {
  test('Redis keeps every key (noeviction), as BullMQ needs', async () => {
    expect(await evictionPolicy(producer)).toBe('noeviction');
  });

  test('the same visit and step queued twice is one job under the stable id', async () => {
    const payload = { practiceId, visitId: uuid(2), step: 'invitation' as const };
    const first = await enqueueReminder(queue, payload);
    const second = await enqueueReminder(queue, { ...payload, origin: 'desk', requestedBy: uuid(9) });
    expect(first.id).toBe(reminderJobId(uuid(2), 'invitation'));
    expect(second.id).toBe(first.id);
    const jobs = await allJobs(queue);
    expect(jobs).toHaveLength(1);
    expect(jobs[0]!.data).toEqual({ ...payload, origin: 'scan' }); // the first one stands
    expect(jobs[0]!.name).toBe(JOBS.sendReminder);
    expect(jobs[0]!.opts.attempts).toBe(6); // the queue's default job options apply

    // A repeated scan in bulk: the duplicate adds nothing, the new step is one more job.
    await enqueueReminders(queue, [payload, { ...payload, step: 'second_invitation' }, { ...payload, step: 'second_invitation' }]);
    expect((await allJobs(queue)).map((j) => j.id).sort()).toEqual(
      [reminderJobId(uuid(2), 'invitation'), reminderJobId(uuid(2), 'second_invitation')].sort(),
    );
  });

  test('a payload that does not parse is refused before it reaches Redis', async () => {
    await expect(enqueueReminder(queue, { practiceId, visitId: 'a:b', step: 'invitation' })).rejects.toThrow(/Invalid send-reminder payload/);
    await expect(enqueueReminders(queue, [{ practiceId, visitId: uuid(3), step: 'invitation' }, { practiceId, visitId: uuid(4), step: 'nope' as 'invitation' }])).rejects.toThrow(TypeError);
    expect(await allJobs(queue)).toHaveLength(0); // one bad payload in a bulk queues none
  });

  test('a worker that fails twice and then succeeds: retried with exponential backoff', async () => {
    const attempts: number[] = [];
    const base = 250;
    const done = new Promise<Job>((resolve, reject) => {
      const worker = new Worker<SendReminderData>(
        QUEUES.reminders,
        async (job) => {
          const data = parseJobData(JOBS.sendReminder, job.data); // parsed again in the worker
          attempts.push(Date.now());
          if (attempts.length <= 2) throw new Error(`SMTP refused (attempt ${attempts.length})`);
          return { sentTo: data.visitId };
        },
        { connection: workerConnection(), prefix, concurrency: 1 },
      );
      opened.push(worker);
      worker.on('error', reject);
      worker.on('completed', (job) => resolve(job));
      worker.on('failed', (job, err) => {
        if (job && job.attemptsMade >= (job.opts.attempts ?? 1)) reject(err);
      });
    });

    const payload = { practiceId, visitId: uuid(5), step: 'last_notice' as const };
    // The queue's default options (6 attempts, exponential) with a short base delay for the test.
    await queue.add(JOBS.sendReminder, parseJobData(JOBS.sendReminder, payload), {
      jobId: reminderJobId(payload.visitId, payload.step),
      backoff: { type: 'exponential', delay: base },
    });

    const job = await done;
    expect(job.attemptsMade).toBe(3);
    expect(job.opts.attempts).toBe(6);
    expect(job.returnvalue).toEqual({ sentTo: uuid(5) });
    expect(attempts).toHaveLength(3);
    // Waits of base × 2^0 and base × 2^1 (BullMQ's exponential strategy), not sooner.
    expect(attempts[1]! - attempts[0]!).toBeGreaterThanOrEqual(base - 5);
    expect(attempts[2]! - attempts[1]!).toBeGreaterThanOrEqual(2 * base - 5);
    const stored = await queue.getJob(reminderJobId(uuid(5), 'last_notice'));
    expect(await stored!.getState()).toBe('completed');
    expect(stored!.stacktrace?.length).toBe(2); // the two failures are on record
  });

  test('a job whose payload never parses fails once, without retries (UnrecoverableError)', async () => {
    const failed = new Promise<Job | undefined>((resolve) => {
      const worker = new Worker(
        QUEUES.reminders,
        async (job) => {
          parseJobData(JOBS.sendReminder, job.data);
        },
        { connection: workerConnection(), prefix },
      );
      opened.push(worker);
      worker.on('failed', (job) => resolve(job));
    });
    // As an older release might have written it: bypasses the producer's parse.
    await queue.add(JOBS.sendReminder, { visitId: uuid(6), step: 'invitation' } as unknown as SendReminderData, { jobId: 'reminder-legacy-1' });
    const job = await failed;
    expect(job!.attemptsMade).toBe(1);
    expect(job!.failedReason).toMatch(/Invalid send-reminder payload: practiceId/);
    expect(await job!.getState()).toBe('failed');
  });
});

describe('connections', () => {
  test('the worker connection never gives up a command; the producer one fails fast', () => {
    const w = connectionForWorker(url, { log: () => {} });
    const p = connectionForProducer(url, { log: () => {} });
    try {
      expect(w.options.maxRetriesPerRequest).toBeNull();
      expect(p.options.maxRetriesPerRequest).toBe(1);
      expect(p.options.enableOfflineQueue).toBe(false);
    } finally {
      w.disconnect();
      p.disconnect();
    }
  });

  test('with Redis unreachable, enqueueing fails within seconds instead of hanging, and the error is logged', async () => {
    const lines: string[] = [];
    const down = connectionForProducer('redis://127.0.0.1:1', { name: 'down', log: (m) => lines.push(m) });
    const q = openRemindersQueue(down, { prefix, failFast: true, log: (m) => lines.push(m) });
    const started = Date.now();
    try {
      await expect(enqueueReminder(q, { practiceId, visitId: uuid(7), step: 'invitation' })).rejects.toThrow(/enableOfflineQueue/);
      expect(Date.now() - started).toBeLessThan(5_000);
      await vi.waitFor(() => expect(lines.some((l) => l.startsWith('[redis down]'))).toBe(true), { timeout: 20_000, interval: 100 });
      expect(lines.join('\n')).not.toContain('redis://'); // never the URL (it may carry a password)
    } finally {
      await q.close().catch(() => {});
      down.disconnect();
    }
  });
});

describe('the recall scan scheduler', () => {
  test('installing it twice leaves one scheduler', async () => {
    const conn = await whenReady(connectionForProducer(url, { log: () => {} }));
    const scans = openRecallScanQueue(conn, { prefix });
    try {
      await upsertRecallScanScheduler(scans);
      await upsertRecallScanScheduler(scans, { pattern: '0 * * * *', tz: 'Europe/London' });
      const schedulers = await scans.getJobSchedulers();
      expect(schedulers).toHaveLength(1);
      expect(schedulers[0]).toMatchObject({ pattern: '0 * * * *', tz: 'Europe/London' });
    } finally {
      await scans.obliterate({ force: true });
      await scans.close();
      conn.disconnect();
    }
  });
});

/**
 * Lamina's queue worker: its own process (`npm run worker`; `npm start` and `npm test` run it
 * beside the web server), never a side effect of the web server.
 *
 *   reminders    `send-reminder` jobs (jobs/send-reminder.ts), WORKER_CONCURRENCY at once over
 *                SMTP_MAX_CONNECTIONS pooled connections; the statements of jobs running at once
 *                are batched (jobs/coalesce.ts)
 *   referrer-mail `send-referrer-mail` jobs (jobs/send-referrer-mail.ts): upload links and outcome
 *                letters to referring dentists, from their outbox (lib/services/referrer-outbox.ts);
 *                every scan also reconciles that outbox
 *   recall-scan  `recall-scan` jobs (jobs/recall-scan.ts), one at a time: hourly by the job
 *                scheduler, at start, and after every reconnection to Redis — a Redis that
 *                restarted without its data has lost its jobs and its scheduler, and the scan
 *                queues again from the outbox in PostgreSQL
 *   storage-sweep `storage-sweep` jobs (jobs/storage-sweep.ts), one at a time: hourly by its job
 *                scheduler (STORAGE_SWEEP_PATTERN, minute 30): objects with no row and rows whose
 *                objects never arrived, older than the grace period, are removed
 *
 * A reminder job that fails for good (its last attempt, or a refusal the relay calls permanent)
 * marks its outbox row failed and flags the visit for the coordinator (the 'failed' event; if
 * the process dies first, the next scan does it).
 *
 * SIGTERM / SIGINT: `worker.close()` lets active jobs finish (nothing new is taken), then queues,
 * SMTP pool, database pool and Redis connections are closed and the process exits 0. A job cut
 * off by a harder stop (SIGKILL) is handed out again by BullMQ once its lock expires, and the
 * outbox claim decides what to do with it (see jobs/send-reminder.ts).
 *
 * Run with `tsx --tsconfig scripts/tsconfig.json jobs/worker.ts` (or `node --import tsx` with
 * TSX_TSCONFIG_PATH=scripts/tsconfig.json): the scripts tsconfig maps `server-only` to an empty
 * module outside Next.
 */
import { hostname } from 'node:os';
import { pathToFileURL } from 'node:url';
import { Worker, type Job } from 'bullmq';
import type { Redis } from 'ioredis';
import type { MikroORM } from '@mikro-orm/postgresql';
import {
  JOBS,
  QUEUES,
  SendReferrerMailPayload,
  SendReminderPayload,
  connectionForWorker,
  enqueueRecallScan,
  openCohortExportsQueue,
  openRecallScanQueue,
  openStorageSweepQueue,
  parseJobData,
  upsertRecallScanScheduler,
  upsertStorageSweepScheduler,
  type RecallScanQueue,
  type ReferrerMailQueue,
  type RemindersQueue,
} from '@/lib/queue';
import { deriveLinkSecret } from '@/lib/recall/reply-token';
import { getOrm } from '@/lib/db';
import { env } from '@/lib/env';
import { knexOf, markReminderFailed, openReminderQueue, reminderQueueSettings } from '@/lib/services/recall-outbox';
import { logger } from '@/lib/log/logger';
import { withRequestId } from '@/lib/log/context';
import { markReferrerMessageFailed, openReferrerQueue, reconcileReferrerOutbox } from '@/lib/services/referrer-outbox';
import { deriveUploadLinkSecret } from '@/lib/referrers/upload-token';
import { processSendReferrerMail, type ReferrerMailContext } from './send-referrer-mail';
import { readWorkerConfig, smtpPoolOf, type WorkerConfig } from './config';
import { createReminderTransport, mailboxDeliveryCheck } from './mail';
import { runRecallScan } from './recall-scan';
import { processSendReminder, type SendContext } from './send-reminder';
import { processCohortExport } from './cohort-export';
import { processStorageSweep } from './storage-sweep';
import { writeCohortArchive } from '@/lib/cohorts/archive';

export interface WorkerHandle {
  remindersQueue: RemindersQueue;
  referrerQueue: ReferrerMailQueue;
  scanQueue: RecallScanQueue;
  /** How many scans this process has run (the first starts at once unless scanOnStart is off). */
  scans: () => number;
  close: () => Promise<void>;
}

// Structured lines (pino, lib/log/logger.ts): JSON on stdout, e-mail addresses scrubbed from any
// message, and ids only — never a patient's name, address, phone or note.
const workerLog = logger('worker');
const log = (message: string) => workerLog.info(message);

export async function startWorker(config: WorkerConfig = readWorkerConfig(), orm?: MikroORM): Promise<WorkerHandle> {
  const db = orm ?? (await getOrm());
  const settings = reminderQueueSettings();
  const prefix = settings.prefix ? { prefix: settings.prefix } : {};
  const connections: Redis[] = [];
  const connect = (name: string) => {
    const c = connectionForWorker(env.REDIS_URL, { name, log });
    connections.push(c);
    return c;
  };

  const producer = connect('worker-producer');
  const remindersQueue = openReminderQueue(producer, settings, { log });
  const scanQueue = openRecallScanQueue(producer, { ...prefix, log });
  const referrerQueue = openReferrerQueue(producer, settings, { log });
  const smtpConnections = smtpPoolOf(config);
  const transport = createReminderTransport(env.SMTP_URL, { maxConnections: smtpConnections, timeoutMs: config.smtpTimeoutMs });

  const sendContext: SendContext = {
    em: () => db.em.fork(),
    transport,
    deliveryCheck: env.localMail && env.MAILBOX_URL ? mailboxDeliveryCheck(env.MAILBOX_URL, env.MAILBOX_SECRET) : undefined,
    linkSecret: deriveLinkSecret(env.NEXTAUTH_SECRET),
    appUrl: env.APP_URL,
    mailFrom: env.MAIL_FROM,
    leaseMs: config.lockMs,
    log,
  };

  const referrerContext: ReferrerMailContext = {
    em: () => db.em.fork(),
    transport,
    deliveryCheck: sendContext.deliveryCheck,
    uploadKey: deriveUploadLinkSecret(env.NEXTAUTH_SECRET),
    appUrl: env.APP_URL,
    mailFrom: env.MAIL_FROM,
    leaseMs: config.lockMs,
    log,
  };

  const common = { ...prefix, name: config.name ?? `${hostname()}-${process.pid}`, lockDuration: config.lockMs, stalledInterval: config.lockMs, maxStalledCount: config.maxStalled };
  let sent = 0;
  const reminders = new Worker(QUEUES.reminders, async (job: Job, token?: string) => {
    // The web request that queued it (a coordinator's "send now") carries on in this job's line.
    const reqId = typeof job.data?.requestId === 'string' ? (job.data.requestId as string) : undefined;
    const started = Date.now();
    const run = () => processSendReminder(sendContext, job, token);
    const result = reqId ? await withRequestId(reqId, run) : await run();
    workerLog.info({ jobId: job.id, reqId, outcome: (result as { outcome?: string } | undefined)?.outcome, ms: Date.now() - started }, 'send-reminder');
    return result;
  }, {
    ...common,
    connection: connect('worker-reminders'),
    concurrency: config.concurrency,
  });
  const referrerMail = new Worker(QUEUES.referrerMail, async (job: Job, token?: string) => processSendReferrerMail(referrerContext, job, token), {
    ...common,
    connection: connect('worker-referrer-mail'),
    concurrency: Math.min(config.concurrency, 4),
  });
  referrerMail.on('failed', (job, err) => {
    if (!job) return;
    void (async () => {
      const state = await job.getState().catch(() => null);
      const final = state === 'failed' || job.attemptsMade >= (job.opts.attempts ?? 1);
      if (!final) {
        log(`[send-referrer-mail] ${job.id}: attempt ${job.attemptsMade} of ${job.opts.attempts ?? 1} failed, retrying: ${err.message}`);
        return;
      }
      const data = SendReferrerMailPayload.safeParse(job.data);
      if (data.success && (await markReferrerMessageFailed(db.em.fork(), data.data.messageId, err.message))) {
        log(`[send-referrer-mail] ${job.id}: given up after ${job.attemptsMade} attempt(s): ${err.message}`);
      }
    })().catch((e: unknown) => log(`[send-referrer-mail] could not record the failure of ${job.id}: ${(e as Error).message}`));
  });
  let scans = 0;
  const scanner = new Worker(
    QUEUES.recallScan,
    async (job: Job) => {
      const data = parseJobData(JOBS.recallScan, job.data);
      const scan = () => runRecallScan({ em: () => db.em.fork(), queue: remindersQueue, log }, data);
      const summary = data.requestId ? await withRequestId(data.requestId, scan) : await scan();
      workerLog.info({ jobId: job.id, reqId: data.requestId, queued: summary.queued, requeued: summary.reconcile.requeued }, 'recall-scan');
      await reconcileReferrerOutbox(db.em.fork(), referrerQueue).catch((e: unknown) => log(`[referrer-mail] reconciliation failed: ${(e as Error).message}`));
      scans += 1;
      return { queued: summary.queued, requeued: summary.reconcile.requeued, finalized: summary.reconcile.finalized };
    },
    { ...common, connection: connect('worker-scan'), concurrency: 1 },
  );

  // research exports (issue 14): one at a time (each streams a practice's rows; memory stays flat)
  const cohortQueue = openCohortExportsQueue(producer, { ...prefix, log });
  const cohorts = new Worker(
    QUEUES.cohortExports,
    async (job: Job, token?: string, signal?: AbortSignal) => processCohortExport({ em: () => db.em.fork(), write: writeCohortArchive, appUrl: env.APP_URL, log }, job, token, signal),
    { ...common, connection: connect('worker-cohorts'), concurrency: 1 },
  );

  // the storage sweep (issue 15): hourly, one at a time
  const sweepQueue = openStorageSweepQueue(producer, { ...prefix, log });
  const sweeper = new Worker(
    QUEUES.storageSweep,
    async (job: Job) => {
      const summary = await processStorageSweep({ em: () => db.em.fork(), graceMinutes: config.sweepGraceMinutes, log }, job);
      workerLog.info({ jobId: job.id, objectsRemoved: summary.objectsRemoved, filmRowsRemoved: summary.filmRowsRemoved, exportsMarkedFailed: summary.exportsMarkedFailed, refusedPractices: summary.refusedPractices }, 'storage-sweep');
      return summary;
    },
    { ...common, connection: connect('worker-sweep'), concurrency: 1 },
  );

  reminders.on('completed', (_job, result: { outcome?: string } | undefined) => {
    if (result?.outcome === 'sent' || result?.outcome === 'resent' || result?.outcome === 'reconciled') sent += 1;
  });
  reminders.on('failed', (job, err) => {
    if (!job) return;
    void (async () => {
      const state = await job.getState().catch(() => null);
      const final = state === 'failed' || job.attemptsMade >= (job.opts.attempts ?? 1);
      if (!final) {
        log(`[send-reminder] ${job.id}: attempt ${job.attemptsMade} of ${job.opts.attempts ?? 1} failed, retrying: ${err.message}`);
        return;
      }
      const data = SendReminderPayload.safeParse(job.data);
      if (!data.success) return;
      const row = (await knexOf(db.em.fork())('reminder').where({ visit_id: data.data.visitId, step: data.data.step, round: data.data.round ?? 0 }).first('id')) as { id: string } | undefined;
      if (row && (await markReminderFailed(db.em.fork(), row.id, err.message))) {
        log(`[send-reminder] ${job.id}: given up after ${job.attemptsMade} attempt(s); the visit is flagged for the coordinator: ${err.message}`);
      }
    })().catch((e: unknown) => log(`[send-reminder] could not record the failure of ${job.id}: ${(e as Error).message}`));
  });
  for (const w of [reminders, referrerMail, scanner, cohorts, sweeper]) w.on('error', (err) => log(`[worker] ${err.message}`));

  // On every (re)connection: the scheduler exists, and a scan runs (Redis may have lost everything).
  let ensuring: Promise<void> | null = null;
  const ensure = () => {
    ensuring ??= (async () => {
      try {
        await upsertRecallScanScheduler(scanQueue, { pattern: config.scanPattern });
        await upsertStorageSweepScheduler(sweepQueue, { pattern: config.sweepPattern });
        if (config.scanOnStart) await enqueueRecallScan(scanQueue, {});
      } catch (e) {
        log(`[worker] could not schedule the recall scan or the storage sweep: ${(e as Error).message}`);
      } finally {
        ensuring = null;
      }
    })();
  };
  producer.on('ready', ensure);
  if (producer.status === 'ready') ensure();

  const progress = setInterval(() => {
    if (sent) log(`[worker] ${sent} reminder(s) sent since start`);
  }, 30_000);
  progress.unref();

  let closing: Promise<void> | null = null;
  const close = () =>
    (closing ??= (async () => {
      clearInterval(progress);
      producer.off('ready', ensure);
      await Promise.all([reminders.close(), referrerMail.close(), scanner.close(), cohorts.close(), sweeper.close()]);
      await Promise.all([remindersQueue.close(), referrerQueue.close(), scanQueue.close(), cohortQueue.close(), sweepQueue.close()]);
      transport.close();
      for (const c of connections) c.disconnect();
      log(`[worker] stopped; ${sent} reminder(s) sent since start`);
    })());

  log(
    `[worker] started: concurrency ${config.concurrency}, SMTP pool ${smtpConnections}, lock ${config.lockMs} ms, scan '${config.scanPattern}'` +
      `${settings.prefix ? `, prefix ${settings.prefix}` : ''}${sendContext.deliveryCheck ? ', delivery check via the local mailbox' : ''}`,
  );
  return { remindersQueue, referrerQueue, scanQueue, scans: () => scans, close };
}

async function main() {
  const handle = await startWorker();
  let stopping = false;
  const stop = (signal: string) => {
    if (stopping) return;
    stopping = true;
    log(`[worker] ${signal}: finishing active jobs, then stopping`);
    void (async () => {
      try {
        await handle.close();
        await (await getOrm()).close(true);
        process.exit(0);
      } catch (e) {
        log(`[worker] error while stopping: ${(e as Error).message}`);
        process.exit(1);
      }
    })();
  };
  process.on('SIGTERM', () => stop('SIGTERM'));
  process.on('SIGINT', () => stop('SIGINT'));
  process.on('unhandledRejection', (e) => log(`[worker] unhandled rejection: ${(e as Error)?.message ?? String(e)}`));
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main().catch((e: unknown) => {
    console.error(`[worker] could not start: ${(e as Error).message}`);
    process.exit(1);
  });
}

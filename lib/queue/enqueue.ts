/**
 * Opening queues and adding jobs. Every add parses its payload first (the worker parses again).
 */
import { Queue, type DefaultJobOptions, type Job, type JobsOptions, type QueueOptions } from 'bullmq';
import type { Redis } from 'ioredis';
import { reminderJobId } from '@/lib/recall/reminders';
import { currentRequestId } from '@/lib/log/context';
import { cohortExportJobId, JOBS, QUEUES, RECALL_SCAN_DEFAULT_PATTERN, RECALL_SCAN_SCHEDULER_ID, STORAGE_SWEEP_DEFAULT_PATTERN, STORAGE_SWEEP_SCHEDULER_ID, type QueueName } from './names';
import { DEFAULT_JOB_OPTIONS, PRODUCER_QUEUE_OPTIONS, RECALL_SCAN_JOB_OPTIONS, STORAGE_SWEEP_JOB_OPTIONS } from './options';
import {
  parsePayload,
  type CohortExportData,
  type CohortExportInput,
  type RecallScanData,
  type RecallScanInput,
  type SendReferrerMailData,
  type SendReferrerMailInput,
  type SendReminderData,
  type SendReminderInput,
  type StorageSweepData,
} from './payloads';

export type RemindersQueue = Queue<SendReminderData, unknown, typeof JOBS.sendReminder>;
export type RecallScanQueue = Queue<RecallScanData, unknown, typeof JOBS.recallScan>;
export type CohortExportsQueue = Queue<CohortExportData, unknown, typeof JOBS.cohortExport>;
export type ReferrerMailQueue = Queue<SendReferrerMailData, unknown, typeof JOBS.sendReferrerMail>;
export type StorageSweepQueue = Queue<StorageSweepData, unknown, typeof JOBS.storageSweep>;

export interface OpenQueueOptions {
  /** Redis key prefix (BullMQ's default 'bull'); tests use their own. */
  prefix?: string;
  /**
   * True for producers on connectionForProducer(): fail at once while Redis is down. Wait for the
   * connection first (`await whenReady(connection)`), or the very first add may fail too.
   */
  failFast?: boolean;
  /** Where queue errors go; console.error by default. */
  log?: (message: string) => void;
  /** Default job options in place of the queue's own (DEFAULT_JOB_OPTIONS): tests' overrides only. */
  jobOptions?: DefaultJobOptions;
}

function queueOptions(name: QueueName, connection: Redis, options: OpenQueueOptions): QueueOptions {
  return {
    connection,
    defaultJobOptions: options.jobOptions ?? DEFAULT_JOB_OPTIONS[name],
    ...(options.prefix ? { prefix: options.prefix } : {}),
    ...(options.failFast ? PRODUCER_QUEUE_OPTIONS : {}),
  };
}

/** The payload with the id of the web request queueing it (when there is one and none was given). */
function withRequest<T extends { requestId?: string }>(payload: T): T {
  const requestId = payload.requestId ?? currentRequestId();
  return requestId ? { ...payload, requestId } : payload;
}

/** A queue with its default job options, its errors logged. Close it with `await queue.close()`. */
function openQueue(name: QueueName, connection: Redis, options: OpenQueueOptions): Queue {
  const queue = new Queue(name, queueOptions(name, connection, options));
  const log = options.log ?? console.error;
  queue.on('error', (err) => log(`[queue ${name}] ${err.message}`));
  return queue;
}

export function openRemindersQueue(connection: Redis, options: OpenQueueOptions = {}): RemindersQueue {
  return openQueue(QUEUES.reminders, connection, options) as RemindersQueue;
}

export function openRecallScanQueue(connection: Redis, options: OpenQueueOptions = {}): RecallScanQueue {
  return openQueue(QUEUES.recallScan, connection, options) as RecallScanQueue;
}

export function openReferrerMailQueue(connection: Redis, options: OpenQueueOptions = {}): ReferrerMailQueue {
  return openQueue(QUEUES.referrerMail, connection, options) as ReferrerMailQueue;
}

/** The job id of a referrer_message row: one job per row. */
export const referrerMailJobId = (messageId: string) => `referrer-mail-${messageId}`;

/** Queues one referrer_message row under its deterministic job id (a job that exists is left alone). */
export async function enqueueReferrerMail(queue: ReferrerMailQueue, payload: SendReferrerMailInput) {
  const data = parsePayload(JOBS.sendReferrerMail, payload);
  return queue.add(JOBS.sendReferrerMail, data, { jobId: referrerMailJobId(data.messageId) });
}

export interface EnqueueOptions {
  /** Wait this long before the job may run (e.g. quietDelayMs from lib/recall/reminders). */
  delay?: number;
}

function jobOptions(data: SendReminderData, options: EnqueueOptions): JobsOptions {
  return {
    jobId: reminderJobId(data.visitId, data.step, data.round ?? 0),
    ...(options.delay && options.delay > 0 ? { delay: Math.round(options.delay) } : {}),
  };
}

/**
 * Queues one visit's step under its deterministic job id. Adding the same visit and step again
 * while the first job is kept adds nothing and returns the existing job.
 */
export async function enqueueReminder(
  queue: RemindersQueue,
  payload: SendReminderInput,
  options: EnqueueOptions = {},
): Promise<Job<SendReminderData, unknown, typeof JOBS.sendReminder>> {
  const data = parsePayload(JOBS.sendReminder, withRequest(payload));
  return queue.add(JOBS.sendReminder, data, jobOptions(data, options));
}

/** Queues many steps in one round trip (the scan); every payload is parsed first, so one bad payload queues none. */
export async function enqueueReminders(
  queue: RemindersQueue,
  payloads: readonly SendReminderInput[],
  options: EnqueueOptions = {},
): Promise<Job<SendReminderData, unknown, typeof JOBS.sendReminder>[]> {
  const jobs = payloads.map((p) => {
    const data = parsePayload(JOBS.sendReminder, withRequest(p));
    return { name: JOBS.sendReminder, data, opts: jobOptions(data, options) };
  });
  return jobs.length ? queue.addBulk(jobs) : [];
}

/** Queues a scan now (e.g. after a policy change, or the desk's "scan again"). */
export async function enqueueRecallScan(queue: RecallScanQueue, payload: RecallScanInput = {}) {
  const data = parsePayload(JOBS.recallScan, withRequest(payload));
  return queue.add(JOBS.recallScan, data);
}

/**
 * Installs (or updates) the scheduled scan: by default at minute 0 of every hour
 * (RECALL_SCAN_DEFAULT_PATTERN), so each practice's "today" is picked up soon after its own
 * midnight whatever its time zone (the scan itself is idempotent; quiet hours hold the messages,
 * not the scan).
 */
export async function upsertRecallScanScheduler(queue: RecallScanQueue, repeat: { pattern?: string; tz?: string } = {}) {
  return queue.upsertJobScheduler(
    RECALL_SCAN_SCHEDULER_ID as typeof JOBS.recallScan,
    { pattern: repeat.pattern ?? RECALL_SCAN_DEFAULT_PATTERN, ...(repeat.tz ? { tz: repeat.tz } : {}) },
    { name: JOBS.recallScan, data: parsePayload(JOBS.recallScan, {}), opts: RECALL_SCAN_JOB_OPTIONS },
  );
}

export function openCohortExportsQueue(connection: Redis, options: OpenQueueOptions = {}): CohortExportsQueue {
  return openQueue(QUEUES.cohortExports, connection, options) as CohortExportsQueue;
}

/** Queues one export under its deterministic job id (adding it again while the job is kept adds nothing). */
export async function enqueueCohortExport(queue: CohortExportsQueue, payload: CohortExportInput) {
  const data = parsePayload(JOBS.cohortExport, payload);
  return queue.add(JOBS.cohortExport, data, { jobId: cohortExportJobId(data.exportId) });
}

export function openStorageSweepQueue(connection: Redis, options: OpenQueueOptions = {}): StorageSweepQueue {
  return openQueue(QUEUES.storageSweep, connection, options) as StorageSweepQueue;
}

/** Installs (or updates) the storage sweep's schedule: by default every hour at minute 30 (STORAGE_SWEEP_DEFAULT_PATTERN). */
export async function upsertStorageSweepScheduler(queue: StorageSweepQueue, repeat: { pattern?: string } = {}) {
  return queue.upsertJobScheduler(
    STORAGE_SWEEP_SCHEDULER_ID as typeof JOBS.storageSweep,
    { pattern: repeat.pattern ?? STORAGE_SWEEP_DEFAULT_PATTERN },
    { name: JOBS.storageSweep, data: parsePayload(JOBS.storageSweep, {}), opts: STORAGE_SWEEP_JOB_OPTIONS },
  );
}

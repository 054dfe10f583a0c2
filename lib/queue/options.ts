/**
 * Default job options per queue.
 *
 * Reminders: 6 attempts with exponential backoff from 60 s and 20 % jitter — waits of about
 * 1, 2, 4, 8 and 16 minutes, so an SMTP relay that is down for half an hour is ridden out; after
 * the last attempt the job fails and the worker flags the visit for the coordinator. Jitter keeps
 * thousands of jobs that failed together from retrying in the same second. (Common practice;
 * Lamina's own numbers.)
 *
 * Finished jobs are kept long enough to deduplicate a repeated scan or a double click — the job
 * id only deduplicates while the old job exists — and bounded so Redis does not grow without
 * end: completed ones 14 days (at most 50,000), failed ones 30 days (at most 50,000) for
 * inspection. Past that, the outbox row per visit and step in PostgreSQL is what prevents a second
 * message.
 */
import type { DefaultJobOptions } from 'bullmq';
import { QUEUES, type QueueName } from './names';

const DAY_SECONDS = 24 * 60 * 60;

export const REMINDER_JOB_OPTIONS = {
  attempts: 6,
  backoff: { type: 'exponential', delay: 60_000, jitter: 0.2 },
  removeOnComplete: { age: 14 * DAY_SECONDS, count: 50_000 },
  removeOnFail: { age: 30 * DAY_SECONDS, count: 50_000 },
} as const satisfies DefaultJobOptions;

/** The history kept of an hourly, idempotent job (the scan, the sweep): little. */
const HOURLY_JOB_HISTORY = {
  removeOnComplete: { age: 7 * DAY_SECONDS, count: 200 },
  removeOnFail: { age: 30 * DAY_SECONDS, count: 500 },
} as const satisfies DefaultJobOptions;

/** The scan is idempotent and runs every hour: a few quick retries, little history. */
export const RECALL_SCAN_JOB_OPTIONS = {
  attempts: 3,
  backoff: { type: 'exponential', delay: 30_000, jitter: 0.2 },
  ...HOURLY_JOB_HISTORY,
} as const satisfies DefaultJobOptions;

/**
 * A research export: 3 attempts, 10 s then 20 s apart (a storage or database hiccup); every attempt
 * writes the same object key, so a retry replaces the partial file. Lamina's own numbers.
 */
export const COHORT_EXPORT_JOB_OPTIONS = {
  attempts: 3,
  backoff: { type: 'exponential', delay: 10_000 },
  removeOnComplete: { age: 7 * DAY_SECONDS, count: 1_000 },
  removeOnFail: { age: 30 * DAY_SECONDS, count: 1_000 },
} as const satisfies DefaultJobOptions;

/** The storage sweep is idempotent and runs every hour: one retry a minute later (a store restarting), little history. */
export const STORAGE_SWEEP_JOB_OPTIONS = {
  attempts: 2,
  backoff: { type: 'fixed', delay: 60_000 },
  ...HOURLY_JOB_HISTORY,
} as const satisfies DefaultJobOptions;

export const DEFAULT_JOB_OPTIONS: Record<QueueName, DefaultJobOptions> = {
  [QUEUES.cohortExports]: COHORT_EXPORT_JOB_OPTIONS,
  [QUEUES.reminders]: REMINDER_JOB_OPTIONS,
  [QUEUES.recallScan]: RECALL_SCAN_JOB_OPTIONS,
  // Mail to referrers follows the reminders' rules: same retries, same history.
  [QUEUES.referrerMail]: REMINDER_JOB_OPTIONS,
  [QUEUES.storageSweep]: STORAGE_SWEEP_JOB_OPTIONS,
};

/**
 * Queue options for producers on a fail-fast connection: do not wait for the connection to be
 * ready, so a command while Redis is down errors at once.
 */
export const PRODUCER_QUEUE_OPTIONS = { skipWaitingForReady: true } as const;

/**
 * The waits before each retry, in ms, without jitter (BullMQ's exponential strategy:
 * delay × 2^(attemptsMade − 1)). With jitter j, each wait lies in [(1 − j)·w, w].
 */
export function retryDelaysMs(options: { attempts: number; backoff: { type: string; delay: number } }): number[] {
  const waits: number[] = [];
  for (let made = 1; made < options.attempts; made++) {
    waits.push(options.backoff.type === 'exponential' ? Math.round(2 ** (made - 1) * options.backoff.delay) : options.backoff.delay);
  }
  return waits;
}

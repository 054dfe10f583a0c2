/**
 * The worker's own settings, read once from the environment and validated (the app's settings —
 * DATABASE_URL, REDIS_URL, SMTP_URL, MAIL_FROM, APP_URL, NEXTAUTH_SECRET, MAILBOX_URL — come from
 * lib/env.ts). Every value has a default; tests and benchmarks shorten the waits.
 */
import { z } from 'zod';
import { RECALL_SCAN_DEFAULT_PATTERN, STORAGE_SWEEP_DEFAULT_PATTERN } from '@/lib/queue/names';

const int = (min: number, max: number) => z.coerce.number().int().min(min).max(max);
const flag = z
  .enum(['0', '1', 'true', 'false'])
  .transform((v) => v === '1' || v === 'true')
  .optional();

export const WorkerConfigSchema = z
  .object({
    /**
     * Reminders worked on at once. Their reads, claims and finishes share statements
     * (jobs/send-reminder.ts), so more at once means fewer statements per message; but after a
     * crash every row then in flight needs a delivery check (DEVELOPERS.md, "The queue worker").
     * 32 since the kill check of `npm run scale-test` passed at 32 (1,000 reminders, 58 in flight).
     */
    WORKER_CONCURRENCY: int(1, 64).default(32),
    /** Parallel SMTP connections (the pool); left out, one per reminder worked on at once (WORKER_CONCURRENCY). */
    SMTP_MAX_CONNECTIONS: int(1, 64).optional(),
    /**
     * BullMQ lock duration and stalled-job check interval, ms. A job whose worker stops renewing
     * its lock for this long is handed to another worker; the outbox claim lease is the same.
     */
    WORKER_LOCK_MS: int(1_000, 600_000).default(30_000),
    /** How often a job may stall (its worker died) before it fails. */
    WORKER_MAX_STALLED: int(1, 20).default(3),
    /** SMTP connection, greeting and socket timeout, ms (shorter than the lock). */
    SMTP_TIMEOUT_MS: int(1_000, 300_000).default(10_000),
    /** The scan's schedule (cron, server time): every hour at minute 0 by default. */
    RECALL_SCAN_PATTERN: z.string().trim().min(9).max(60).default(RECALL_SCAN_DEFAULT_PATTERN),
    /** Scan at start and after every reconnection to Redis (default yes). */
    RECALL_SCAN_ON_START: flag,
    /** The storage sweep's schedule (cron, server time): every hour at minute 30 by default. */
    STORAGE_SWEEP_PATTERN: z.string().trim().min(9).max(60).default(STORAGE_SWEEP_DEFAULT_PATTERN),
    /** Minutes an object or row must be old before the sweep removes it (default 60: lib/storage/orphans.ts). */
    STORAGE_SWEEP_GRACE_MINUTES: int(1, 7 * 24 * 60).optional(),
    /** This worker's name, stored on every job it processes (BullMQ `processedBy`); host and pid by default. */
    WORKER_NAME: z.string().trim().min(1).max(80).optional(),
  })
  .transform((c, ctx) => {
    if (c.SMTP_TIMEOUT_MS >= c.WORKER_LOCK_MS) {
      ctx.addIssue({ code: 'custom', path: ['SMTP_TIMEOUT_MS'], message: 'SMTP_TIMEOUT_MS must be shorter than WORKER_LOCK_MS.' });
    }
    return {
      concurrency: c.WORKER_CONCURRENCY,
      ...(c.SMTP_MAX_CONNECTIONS ? { smtpConnections: c.SMTP_MAX_CONNECTIONS } : {}),
      lockMs: c.WORKER_LOCK_MS,
      maxStalled: c.WORKER_MAX_STALLED,
      smtpTimeoutMs: c.SMTP_TIMEOUT_MS,
      scanPattern: c.RECALL_SCAN_PATTERN,
      scanOnStart: c.RECALL_SCAN_ON_START ?? true,
      sweepPattern: c.STORAGE_SWEEP_PATTERN,
      ...(c.STORAGE_SWEEP_GRACE_MINUTES ? { sweepGraceMinutes: c.STORAGE_SWEEP_GRACE_MINUTES } : {}),
      /** Left out: host and pid (jobs/worker.ts). */
      ...(c.WORKER_NAME ? { name: c.WORKER_NAME } : {}),
    };
  });

/**
 * `sweepPattern` may be left out by callers that build a config by hand (tests): the default
 * schedule then (and `smtpConnections`, optional anyway: smtpPoolOf).
 */
export type WorkerConfig = Omit<z.output<typeof WorkerConfigSchema>, 'sweepPattern'> & { name?: string; sweepPattern?: string };

/** The SMTP pool's size: SMTP_MAX_CONNECTIONS, or else the concurrency (a relay that limits connections per client wants fewer). */
export function smtpPoolOf(config: Pick<WorkerConfig, 'concurrency' | 'smtpConnections'>): number {
  return config.smtpConnections ?? config.concurrency;
}

export function readWorkerConfig(source: Record<string, string | undefined> = process.env): WorkerConfig {
  const parsed = WorkerConfigSchema.safeParse(source);
  if (!parsed.success) {
    throw new Error(`The worker's configuration is invalid:\n${parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`).join('\n')}`);
  }
  return parsed.data;
}

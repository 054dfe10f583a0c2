/**
 * Job payloads as zod schemas: parsed when a job is enqueued and again in the worker (a job
 * may have been written by an older release, or by hand). Strict objects: an unknown field is
 * refused rather than silently carried along. Payloads hold ids only, never patient data —
 * Redis is not where health data lives.
 */
import { UnrecoverableError } from 'bullmq';
import { z } from 'zod';
import { isCalendarDate } from '@/lib/registry/calendar-date';
import { MAX_REMINDER_ROUND, REMINDER_STEPS } from '@/lib/recall/reminders';
import { JOBS, type JobName } from './names';

/** Ids that can go into a BullMQ job id: letters, digits, - and _ (UUIDs pass). */
export const JobSafeId = z
  .string({ error: 'Missing id.' })
  .regex(/^[A-Za-z0-9_-]{1,64}$/, 'An id in a job uses letters, digits, - and _ only (at most 64).');

const Day = z.string().refine(isCalendarDate, 'A day is written YYYY-MM-DD.');

export const SendReminderPayload = z.strictObject({
  practiceId: JobSafeId,
  visitId: JobSafeId,
  step: z.enum(REMINDER_STEPS, { error: 'The step is invitation, second_invitation, last_notice or proposal.' }),
  /** The visit's reminder round (a proposal starts a new one); 0, and left out, for the first. */
  round: z.number().int().min(0).max(MAX_REMINDER_ROUND).optional(),
  /** Who asked: the scheduled scan, or a coordinator's "send now". */
  origin: z.enum(['scan', 'desk']).default('scan'),
  /** The coordinator, for "send now" (audit). */
  requestedBy: JobSafeId.optional(),
  /** The practice's day on which the step was entered. */
  day: Day.optional(),
  /** The web request that queued it (lib/log/context.ts), for the worker's log lines. */
  requestId: JobSafeId.optional(),
});
export type SendReminderInput = z.input<typeof SendReminderPayload>;
export type SendReminderData = z.output<typeof SendReminderPayload>;

export const RecallScanPayload = z.strictObject({
  /** One practice, or every practice when left out. */
  practiceId: JobSafeId.optional(),
  /** The day to scan for; left out, each practice's own today in its time zone. */
  day: Day.optional(),
  /** The web request that queued it, if any. */
  requestId: JobSafeId.optional(),
});
export type RecallScanInput = z.input<typeof RecallScanPayload>;
export type RecallScanData = z.output<typeof RecallScanPayload>;

export const CohortExportPayload = z.strictObject({
  practiceId: JobSafeId,
  exportId: JobSafeId,
});
export type CohortExportInput = z.input<typeof CohortExportPayload>;
export type CohortExportData = z.output<typeof CohortExportPayload>;

export const SendReferrerMailPayload = z.strictObject({
  practiceId: JobSafeId,
  /** The outbox row (referrer_message). */
  messageId: JobSafeId,
});
export type SendReferrerMailInput = z.input<typeof SendReferrerMailPayload>;
export type SendReferrerMailData = z.output<typeof SendReferrerMailPayload>;

/** The sweep's job carries nothing: its grace period is the worker's (STORAGE_SWEEP_GRACE_MINUTES). */
export const StorageSweepPayload = z.strictObject({
  requestId: JobSafeId.optional(),
});
export type StorageSweepData = z.output<typeof StorageSweepPayload>;

export const JOB_PAYLOADS = {
  [JOBS.cohortExport]: CohortExportPayload,
  [JOBS.sendReminder]: SendReminderPayload,
  [JOBS.recallScan]: RecallScanPayload,
  [JOBS.sendReferrerMail]: SendReferrerMailPayload,
  [JOBS.storageSweep]: StorageSweepPayload,
} as const;

export type JobData = { [JOBS.sendReminder]: SendReminderData; [JOBS.recallScan]: RecallScanData; [JOBS.cohortExport]: CohortExportData; [JOBS.sendReferrerMail]: SendReferrerMailData; [JOBS.storageSweep]: StorageSweepData };

/** A plain one-line summary of what is wrong with a payload. */
export function payloadProblems(error: z.ZodError): string {
  return error.issues.map((i) => `${i.path.join('.') || '(payload)'}: ${i.message}`).join('; ');
}

/** For producers: the parsed payload, or a TypeError saying what is wrong. */
export function parsePayload<N extends JobName>(name: N, data: unknown): JobData[N] {
  const parsed = JOB_PAYLOADS[name].safeParse(data);
  if (!parsed.success) throw new TypeError(`Invalid ${name} payload: ${payloadProblems(parsed.error)}`);
  return parsed.data as JobData[N];
}

/**
 * For the worker: the parsed payload, or an UnrecoverableError — a payload that does not parse
 * will never succeed, so BullMQ must not retry it.
 */
export function parseJobData<N extends JobName>(name: N, data: unknown): JobData[N] {
  if (!(name in JOB_PAYLOADS)) throw new UnrecoverableError(`Unknown job name: ${String(name)}`);
  const parsed = JOB_PAYLOADS[name].safeParse(data);
  if (!parsed.success) throw new UnrecoverableError(`Invalid ${name} payload: ${payloadProblems(parsed.error)}`);
  return parsed.data as JobData[N];
}

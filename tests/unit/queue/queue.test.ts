import { UnrecoverableError } from 'bullmq';
import { describe, expect, it } from 'vitest';
import {
  DEFAULT_JOB_OPTIONS,
  JOBS,
  JOB_PAYLOADS,
  JOB_QUEUE,
  QUEUES,
  RECALL_SCAN_JOB_OPTIONS,
  RECALL_SCAN_SCHEDULER_ID,
  REMINDER_JOB_OPTIONS,
  STORAGE_SWEEP_SCHEDULER_ID,
  RecallScanPayload,
  SendReminderPayload,
  parseJobData,
  parsePayload,
  retryDelaysMs,
} from '@/lib/queue';
import { reminderJobId } from '@/lib/recall/reminders';

const uuid = (n: number) => `00000000-0000-4000-8000-${String(n).padStart(12, '0')}`;
const good = { practiceId: uuid(1), visitId: uuid(2), step: 'invitation' as const };

describe('names, defined once', () => {
  it('has the queues and their jobs, none with ":"', () => {
    expect(QUEUES).toEqual({ reminders: 'reminders', recallScan: 'recall-scan', cohortExports: 'cohort-exports', referrerMail: 'referrer-mail', storageSweep: 'storage-sweep' });
    expect(JOB_QUEUE).toEqual({ 'send-reminder': 'reminders', 'recall-scan': 'recall-scan', 'cohort-export': 'cohort-exports', 'send-referrer-mail': 'referrer-mail', 'storage-sweep': 'storage-sweep' });
    for (const name of [...Object.values(QUEUES), ...Object.values(JOBS), RECALL_SCAN_SCHEDULER_ID, STORAGE_SWEEP_SCHEDULER_ID]) expect(name).not.toContain(':');
    expect(Object.keys(JOB_PAYLOADS).sort()).toEqual(Object.values(JOBS).sort());
    expect(Object.keys(DEFAULT_JOB_OPTIONS).sort()).toEqual(Object.values(QUEUES).sort());
  });
});

describe('send-reminder payload', () => {
  it('parses and fills the origin', () => {
    expect(SendReminderPayload.parse(good)).toEqual({ ...good, origin: 'scan' });
    expect(SendReminderPayload.parse({ ...good, origin: 'desk', requestedBy: uuid(3), day: '2024-02-29' })).toMatchObject({ origin: 'desk', day: '2024-02-29' });
  });

  it.each([
    ['no visit', { ...good, visitId: undefined }, 'visitId'],
    ['a visit id with ":"', { ...good, visitId: 'a:b' }, 'visitId'],
    ['an unknown step', { ...good, step: 'reminder' }, 'step'],
    ['an unknown origin', { ...good, origin: 'cron' }, 'origin'],
    ['a day that does not exist', { ...good, day: '2023-02-29' }, 'day'],
    ['an unknown field (patient data must not ride along)', { ...good, email: 'anna@example.org' }, ''],
    ['a number for an id', { ...good, practiceId: 7 }, 'practiceId'],
    ['a negative round', { ...good, round: -1 }, 'round'],
    ['a round that is not whole', { ...good, round: 1.5 }, 'round'],
  ])('refuses %s', (_label, input, path) => {
    const r = SendReminderPayload.safeParse(input);
    expect(r.success).toBe(false);
    if (!r.success) expect(r.error.issues[0]!.path.join('.')).toBe(path);
  });

  it('carries a proposal and its round (a payload without one is round 0, as older jobs are)', () => {
    expect(SendReminderPayload.parse({ ...good, step: 'proposal', round: 2 })).toEqual({ ...good, step: 'proposal', round: 2, origin: 'scan' });
    expect(SendReminderPayload.parse(good)).not.toHaveProperty('round');
    expect(reminderJobId(good.visitId, 'proposal', 2)).toBe(`reminder-${good.visitId}-proposal-r2`);
  });

  it('says what is wrong when enqueuing (TypeError) and in the worker (UnrecoverableError: never retried)', () => {
    expect(() => parsePayload(JOBS.sendReminder, { ...good, step: 'x' })).toThrow(TypeError);
    expect(() => parsePayload(JOBS.sendReminder, { ...good, step: 'x' })).toThrow(/Invalid send-reminder payload: step:/);
    expect(() => parseJobData(JOBS.sendReminder, { ...good, step: 'x' })).toThrow(UnrecoverableError);
    expect(() => parseJobData('nope' as typeof JOBS.sendReminder, good)).toThrow(UnrecoverableError);
    expect(parseJobData(JOBS.sendReminder, good)).toEqual({ ...good, origin: 'scan' });
  });
});

describe('recall-scan payload', () => {
  it('is empty by default, or one practice and day', () => {
    expect(RecallScanPayload.parse({})).toEqual({});
    expect(RecallScanPayload.parse({ practiceId: uuid(1), day: '2026-01-31' })).toEqual({ practiceId: uuid(1), day: '2026-01-31' });
    expect(RecallScanPayload.safeParse({ day: '2026-02-30' }).success).toBe(false);
    expect(RecallScanPayload.safeParse({ all: true }).success).toBe(false);
  });
});

describe('job ids of reminders', () => {
  it('one per visit and step, deterministic, valid for BullMQ', () => {
    const ids = [uuid(1), uuid(2)].flatMap((v) => (['invitation', 'second_invitation', 'last_notice'] as const).map((s) => reminderJobId(v, s)));
    expect(new Set(ids).size).toBe(6);
    for (const id of ids) {
      expect(id).not.toContain(':');
      expect(`${parseInt(id, 10)}`).not.toBe(id);
    }
    expect(reminderJobId(good.visitId, good.step)).toBe(`reminder-${good.visitId}-invitation`);
  });
});

describe('default job options', () => {
  it('reminders: 6 attempts, exponential from 60 s (about 1, 2, 4, 8, 16 minutes), bounded history', () => {
    expect(REMINDER_JOB_OPTIONS.attempts).toBe(6);
    expect(retryDelaysMs(REMINDER_JOB_OPTIONS)).toEqual([60_000, 120_000, 240_000, 480_000, 960_000]);
    expect(REMINDER_JOB_OPTIONS.backoff.jitter).toBeGreaterThan(0);
    expect(REMINDER_JOB_OPTIONS.removeOnComplete).toEqual({ age: 14 * 86_400, count: 50_000 });
    expect(REMINDER_JOB_OPTIONS.removeOnFail).toEqual({ age: 30 * 86_400, count: 50_000 });
  });

  it('the scan: a few retries, little history', () => {
    expect(retryDelaysMs(RECALL_SCAN_JOB_OPTIONS)).toEqual([30_000, 60_000]);
    expect(RECALL_SCAN_JOB_OPTIONS.removeOnComplete.count).toBeLessThanOrEqual(1000);
  });

  it('fixed backoff repeats the delay', () => {
    expect(retryDelaysMs({ attempts: 3, backoff: { type: 'fixed', delay: 5 } })).toEqual([5, 5]);
  });
});

/**
 * The queues and job names, defined once. The web process (producer), the worker process and
 * the tests all import them from here; nothing else spells a queue or job name.
 *
 * Names contain no ':' (BullMQ uses it in its Redis keys).
 */
export const QUEUES = {
  /** One job per visit and step: render, check the outbox, send. */
  reminders: 'reminders',
  /** The scheduled scan that finds visits entering a step and queues their reminders. */
  recallScan: 'recall-scan',
  /** One job per research export (issue 14): read a cohort version's rows, write the archive to storage. */
  cohortExports: 'cohort-exports',
  /** One job per referrer_message row (upload link, outcome letter): claim, render, send. */
  referrerMail: 'referrer-mail',
  /** The scheduled storage sweep (issue 15): objects with no row, rows whose objects never arrived. */
  storageSweep: 'storage-sweep',
} as const;
export type QueueName = (typeof QUEUES)[keyof typeof QUEUES];

export const JOBS = {
  sendReminder: 'send-reminder',
  recallScan: 'recall-scan',
  cohortExport: 'cohort-export',
  sendReferrerMail: 'send-referrer-mail',
  storageSweep: 'storage-sweep',
} as const;
export type JobName = (typeof JOBS)[keyof typeof JOBS];

/** Which job runs on which queue. */
export const JOB_QUEUE: Record<JobName, QueueName> = {
  [JOBS.sendReminder]: QUEUES.reminders,
  [JOBS.recallScan]: QUEUES.recallScan,
  [JOBS.cohortExport]: QUEUES.cohortExports,
  [JOBS.sendReferrerMail]: QUEUES.referrerMail,
  [JOBS.storageSweep]: QUEUES.storageSweep,
};

/** The export's job id: one per export row, so a double click or a re-add queues nothing twice. */
export const cohortExportJobId = (exportId: string) => `cohort-export-${exportId}`;

/** The id of the recall scan's job scheduler (one per deployment). */
export const RECALL_SCAN_SCHEDULER_ID = 'recall-scan-hourly';

/** The scan's default schedule (cron, server time): every hour at minute 0 (RECALL_SCAN_PATTERN overrides it). */
export const RECALL_SCAN_DEFAULT_PATTERN = '0 * * * *';

/** The id of the storage sweep's job scheduler (one per deployment). */
export const STORAGE_SWEEP_SCHEDULER_ID = 'storage-sweep-hourly';

/** The sweep's default schedule (cron, server time): every hour at minute 30, away from the scan. */
export const STORAGE_SWEEP_DEFAULT_PATTERN = '30 * * * *';

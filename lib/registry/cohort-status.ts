/** The export's states (zod-free, for client components too). */
export const COHORT_EXPORT_STATUSES = ['queued', 'running', 'done', 'failed', 'cancelled'] as const;
export type CohortExportStatus = (typeof COHORT_EXPORT_STATUSES)[number];
/** States an export does not leave. */
export const FINAL_EXPORT_STATUSES: readonly CohortExportStatus[] = ['done', 'failed', 'cancelled'];
export const EXPORT_STATUS_WORDS: Record<CohortExportStatus, string> = {
  queued: 'Queued',
  running: 'Running',
  done: 'Ready',
  failed: 'Failed',
  cancelled: 'Cancelled',
};

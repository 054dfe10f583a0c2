/**
 * The `storage-sweep` job (issue 15, faults): run by its job scheduler every hour (minute 30 by
 * default, STORAGE_SWEEP_PATTERN), it removes objects with no row and rows whose objects never
 * arrived, older than the grace period (lib/services/storage-sweep.ts; the selection is pure in
 * lib/storage/orphans.ts). Idempotent; a store that errors fails the attempt and nothing is
 * removed. `npm run storage-sweep` runs the same sweep by hand.
 */
import type { Job } from 'bullmq';
import type { EntityManager } from '@mikro-orm/postgresql';
import { JOBS, parseJobData } from '@/lib/queue';
import { sweepStorage, type SweepSummary } from '@/lib/services/storage-sweep';

export interface SweepJobContext {
  em: () => EntityManager;
  /** from STORAGE_SWEEP_GRACE_MINUTES (lib/storage/orphans.ts's hour when left out) */
  graceMinutes?: number;
  log?: (message: string) => void;
}

export async function processStorageSweep(ctx: SweepJobContext, job: Job): Promise<SweepSummary> {
  parseJobData(JOBS.storageSweep, job.data);
  return sweepStorage(ctx.em(), { ...(ctx.graceMinutes ? { graceMs: ctx.graceMinutes * 60_000 } : {}), log: ctx.log });
}

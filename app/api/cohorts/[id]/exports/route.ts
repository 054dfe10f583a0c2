import { handler, json, readJson } from '@/lib/http';
import { startCohortExport } from '@/lib/services/cohorts';

/** POST /api/cohorts/:id/exports { version } → 202 with the queued export (made by the worker). */
export const POST = handler<{ id: string }>('cohort.export', async ({ em, actor, params, req }) => json(await startCohortExport(em, actor, params.id, await readJson(req)), 202));

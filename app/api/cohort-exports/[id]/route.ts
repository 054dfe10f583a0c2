import { handler } from '@/lib/http';
import { readCohortExport } from '@/lib/services/cohorts';

/** GET /api/cohort-exports/:id → status and progress (the page polls it), the figures and a signed link when ready. */
export const GET = handler<{ id: string }>('cohort.export', async ({ em, actor, params }) => readCohortExport(em, actor, params.id));

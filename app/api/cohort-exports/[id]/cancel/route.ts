import { handler } from '@/lib/http';
import { cancelCohortExport } from '@/lib/services/cohorts';

/** POST /api/cohort-exports/:id/cancel → a queued export cancelled at once, a running one asked to stop (its partial file is removed). */
export const POST = handler<{ id: string }>('cohort.export', async ({ em, actor, params }) => cancelCohortExport(em, actor, params.id));

import { handler } from '@/lib/http';
import { readCohort } from '@/lib/services/cohorts';

/** GET /api/cohorts/:id → the cohort, its saved versions and its latest exports. */
export const GET = handler<{ id: string }>('cohort.export', async ({ em, actor, params }) => readCohort(em, actor, params.id));

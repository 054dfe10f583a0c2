import { handler, readJson } from '@/lib/http';
import { saveCohortVersion } from '@/lib/services/cohorts';

/** POST /api/cohorts/:id/versions { filters, variables, k } → the next saved (immutable) version. */
export const POST = handler<{ id: string }>('cohort.export', async ({ em, actor, params, req }) => saveCohortVersion(em, actor, params.id, await readJson(req)));

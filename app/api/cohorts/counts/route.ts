import { handler } from '@/lib/http';
import { countCohort } from '@/lib/services/cohorts';

/** GET /api/cohorts/counts?from&to&kind&clinicians=C1,C2&f.<factor>=… → the builder's live counts (consenting patients only; those left out counted apart). */
export const GET = handler('cohort.export', async ({ em, actor, req }) => countCohort(em, actor, Object.fromEntries(new URL(req.url).searchParams)));

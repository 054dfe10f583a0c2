import { handler, readJson } from '@/lib/http';
import { createCohort, listCohorts } from '@/lib/services/cohorts';

/** GET /api/cohorts → the practice's research cohorts; POST { name } → a new cohort (researcher). */
export const GET = handler('cohort.export', async ({ em, actor }) => ({ cohorts: await listCohorts(em, actor) }));
export const POST = handler('cohort.export', async ({ em, actor, req }) => createCohort(em, actor, await readJson(req)));

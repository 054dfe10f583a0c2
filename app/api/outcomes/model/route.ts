import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesModel } from '@/lib/services/outcomes-model';

/** GET /api/outcomes/model?covariates=kind,lesion,pai&lesionAs&paiAs&endpoint&from&to&clinician&kind → Cox and logistic models (issue 12, item 4). */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => outcomesModel(em, actor, searchParamsObject(req.url)));

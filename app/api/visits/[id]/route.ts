import { handler, readJson } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';
import { updateVisit } from '@/lib/services/visits';

/**
 * PATCH /api/visits/:id { status?, bookedDate?, note? } → { visits: VisitView[] } (the case's visits).
 * A move the status table does not allow answers 409; status 'closed' closes it as lost to follow-up.
 */
export const PATCH = handler<{ id: string }>('recall.manage', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { visits: await updateVisit(em, actor, id, await readJson(req)) };
});

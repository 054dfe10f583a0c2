import { handler } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { IdParams } from '@/lib/services/registry-common';
import { listVisits } from '@/lib/services/visits';

/** GET /api/cases/:id/visits → { visits: VisitView[] }. */
export const GET = handler<{ id: string }>('patient.read', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return { visits: await listVisits(em, actor, id) };
});

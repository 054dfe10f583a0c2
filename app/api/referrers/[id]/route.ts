import { handler, json, readJson } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { updateReferrer } from '@/lib/services/referrers';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/** PATCH /api/referrers/:id (ReferrerUpdateSchema: name, practiceName, email, archived) → 200 { referrer: ReferrerView }. */
export const PATCH = handler<P>('patient.write', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return json({ referrer: await updateReferrer(em, actor, id, await readJson(req)) });
});

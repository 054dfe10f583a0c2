import { handler, json, readJson } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { sendUploadLink } from '@/lib/services/referrer-links';
import { IdParams } from '@/lib/services/registry-common';

type P = { id: string };

/**
 * POST /api/cases/:id/referrer-links { visitId, days? } → 201 { linkId, expiresAt, to, queued }:
 * e-mails the case's referrer a single-use upload link for that visit (through the referrer
 * outbox). 422 when the case has no referrer or the referrer no e-mail address.
 */
export const POST = handler<P>('referrer.send', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return json(await sendUploadLink(em, actor, id, await readJson(req)), 201);
});

import { handler, json, readJson } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { addCallNote } from '@/lib/services/recall-contact';
import { IdParams } from '@/lib/services/registry-common';

/** POST /api/recall/visits/:id/notes { note, reached } → 201 { visit: DeskRow, entries: ContactEntryView[] }. */
export const POST = handler<{ id: string }>('recall.manage', async ({ req, em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return json(await addCallNote(em, actor, id, await readJson(req)), 201);
});

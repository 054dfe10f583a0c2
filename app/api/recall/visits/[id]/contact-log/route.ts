import { handler } from '@/lib/http';
import { parseInput } from '@/lib/services/parse';
import { listContactLog } from '@/lib/services/recall-contact';
import { IdParams } from '@/lib/services/registry-common';

/** GET /api/recall/visits/:id/contact-log → { visit: DeskRow, entries: ContactEntryView[] } (oldest first). */
export const GET = handler<{ id: string }>('recall.manage', async ({ em, actor, params }) => {
  const { id } = parseInput(IdParams, params);
  return listContactLog(em, actor, id);
});

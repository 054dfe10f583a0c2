import { csvDownload, handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { worklistCsvStream } from '@/lib/services/outcomes-worklist';

/** GET /api/outcomes/worklist/export?from&to&clinician&kind → the worklist as CSV, streamed as its rows are read (the one CSV writer; audited). */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => {
  const { chunks } = await worklistCsvStream(em, actor, searchParamsObject(req.url));
  return csvDownload(chunks, `lamina-worklist-${new Date().toISOString().slice(0, 10)}.csv`);
});

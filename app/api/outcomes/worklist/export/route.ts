import { csvDownload, handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { worklistCsv } from '@/lib/services/outcomes-worklist';

/** GET /api/outcomes/worklist/export?from&to&clinician&kind → the worklist as CSV (the one CSV writer; audited). */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => {
  const csv = await worklistCsv(em, actor, searchParamsObject(req.url));
  return csvDownload(csv, `lamina-worklist-${new Date().toISOString().slice(0, 10)}.csv`);
});

import { csvDownload, handler } from '@/lib/http';
import { exportAuditCsv } from '@/lib/services/audit';
import { searchParamsObject } from '@/lib/schemas/paging';

/** The filtered audit trail as a CSV download (same filters as the page). */
export const GET = handler('audit.read', async ({ req, em, actor }) => {
  const { csv, truncated } = await exportAuditCsv(em, actor, searchParamsObject(req.url));
  const day = new Date().toISOString().slice(0, 10);
  return csvDownload(csv, `lamina-audit-${day}.csv`, truncated ? { 'X-Lamina-Truncated': 'true' } : {});
});

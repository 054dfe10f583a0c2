import { handler } from '@/lib/http';
import { listAuditEvents } from '@/lib/services/audit';
import { searchParamsObject } from '@/lib/schemas/paging';

/** The audit trail, filtered (person, action, record, ref, from, to) and paged; see lib/schemas/audit.ts. */
export const GET = handler('audit.read', async ({ req, em, actor }) => listAuditEvents(em, actor, searchParamsObject(req.url)));

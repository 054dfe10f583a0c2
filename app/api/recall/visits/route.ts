import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { listDeskRows } from '@/lib/services/recall-desk';

/**
 * GET /api/recall/visits?queue=due_soon|overdue|call|awaiting_reply|replied|delivery_failed|missed|this_month&clinician=<user id>
 *   &page&pageSize&sort=dueDate|patient|lastContact&dir=asc|desc
 * → { rows: DeskRow[], total, page, pageSize, queue, today, toothLabel }.
 */
export const GET = handler('recall.manage', async ({ req, em, actor }) => listDeskRows(em, actor, searchParamsObject(req.url)));

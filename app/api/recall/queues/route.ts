import { handler } from '@/lib/http';
import { deskQueues } from '@/lib/services/recall-desk';

/** GET /api/recall/queues → { today, queues: [{ key, label, definition, count }] } (the six desk queues). */
export const GET = handler('recall.manage', async ({ em, actor }) => deskQueues(em, actor));

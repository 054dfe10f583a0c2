import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { readingQueue } from '@/lib/services/readings';

/** GET /api/reading/queue?scope=mine|practice → the films waiting for this reader (blinded tasks carry the film id only). */
export const GET = handler('reading.queue', async ({ req, em, actor }) => readingQueue(em, actor, searchParamsObject(req.url)));

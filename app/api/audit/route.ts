import { z } from 'zod';
import { handler } from '@/lib/http';
import { listAuditEvents } from '@/lib/services/audit';
import { parseInput } from '@/lib/services/parse';
import { Paging, searchParamsObject } from '@/lib/schemas/paging';

const Query = Paging.extend({ action: z.string().max(80).regex(/^[a-z_.]*$/, 'Unknown action filter.').optional() });

export const GET = handler('audit.read', async ({ req, em, actor }) =>
  listAuditEvents(em, actor, parseInput(Query, searchParamsObject(req.url))),
);

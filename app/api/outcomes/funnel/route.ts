import { z } from 'zod';
import { csvDownload, handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesFunnel, outcomesFunnelCsv } from '@/lib/services/outcomes-funnel';
import { parseInput } from '@/lib/services/parse';

const Format = z.object({ format: z.enum(['json', 'csv'], { error: 'format is json or csv.' }).default('json') });

/**
 * GET /api/outcomes/funnel?measure=m12|latest&adjust=crude|adjusted&from&to&clinician&kind[&format=csv]
 * → the clinician audit's funnel (every clinician of the period and kind; a clinician sees the others unnamed), or its table as CSV.
 */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => {
  const { format, ...rest } = searchParamsObject(req.url);
  if (parseInput(Format, { format }).format === 'json') return outcomesFunnel(em, actor, rest);
  const csv = await outcomesFunnelCsv(em, actor, rest);
  return csvDownload(csv, `lamina-outcomes-clinicians-${new Date().toISOString().slice(0, 10)}.csv`);
});

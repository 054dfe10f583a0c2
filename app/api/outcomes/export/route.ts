import { z } from 'zod';
import { csvDownload, handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesCsv } from '@/lib/services/outcomes';
import { outcomesModelCsv } from '@/lib/services/outcomes-model';
import { parseInput } from '@/lib/services/parse';

const View = z.object({ view: z.enum(['overview', 'factor', 'curves', 'model'], { error: 'view is overview, factor, curves or model.' }) });

/** GET /api/outcomes/export?view=overview|factor|curves|model&… → the view's table as CSV (the one CSV writer). */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => {
  const { view, ...rest } = searchParamsObject(req.url);
  const v = parseInput(View, { view }).view;
  const csv = v === 'model' ? await outcomesModelCsv(em, actor, rest) : await outcomesCsv(em, actor, v, rest);
  const day = new Date().toISOString().slice(0, 10);
  return csvDownload(csv, `lamina-outcomes-${v}-${day}.csv`);
});

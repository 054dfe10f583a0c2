import { z } from 'zod';
import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesCsv } from '@/lib/services/outcomes';
import { parseInput } from '@/lib/services/parse';

const View = z.object({ view: z.enum(['overview', 'factor', 'curves'], { error: 'view is overview, factor or curves.' }) });

/** GET /api/outcomes/export?view=overview|factor|curves&… → the view's table as CSV (the one CSV writer). */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => {
  const { view, ...rest } = searchParamsObject(req.url);
  const v = parseInput(View, { view }).view;
  const csv = await outcomesCsv(em, actor, v, rest);
  const day = new Date().toISOString().slice(0, 10);
  return new Response(csv, {
    headers: {
      'Content-Type': 'text/csv; charset=utf-8',
      'Content-Disposition': `attachment; filename="lamina-outcomes-${v}-${day}.csv"`,
      'Cache-Control': 'no-store',
      'X-Content-Type-Options': 'nosniff',
    },
  });
});

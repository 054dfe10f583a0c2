import { z } from 'zod';
import { csvDownload, handler } from '@/lib/http';
import { readImportBody, streamImport } from '@/lib/http-import';
import { importReviews, ReviewImportInputSchema, reviewImportTemplate } from '@/lib/services/import-reviews';
import { parseInput } from '@/lib/services/parse';
import { searchParamsObject } from '@/lib/schemas/paging';

/** GET /api/reviews/import → the review template (CSV attachment). */
export const GET = handler('case.import', async () => {
  const t = reviewImportTemplate();
  return csvDownload(t.body, t.filename);
});

const flag = z.enum(['0', '1'], { error: 'Write 0 or 1.' }).optional();
const Query = z.object({
  mode: z.enum(['dry-run', 'commit'], { error: 'Add ?mode=dry-run or ?mode=commit.' }),
  stream: flag,
  validRowsOnly: flag,
  remindOverdue: flag,
});

/**
 * POST /api/reviews/import?mode=dry-run|commit[&validRowsOnly=1][&remindOverdue=1] with the CSV
 * (review template) as text/csv, a multipart field `file`, or JSON { csv, validRowsOnly?,
 * remindOverdue? }. Answers the ReviewImportResult, or streams NDJSON progress then the result
 * (`Accept: application/x-ndjson` or ?stream=1), as the case import does.
 */
export const POST = handler('case.import', async ({ req, em, actor }) => {
  const q = parseInput(Query, searchParamsObject(req.url));
  const body = await readImportBody(req);
  const input = parseInput(ReviewImportInputSchema, {
    validRowsOnly: q.validRowsOnly === '1',
    remindOverdue: q.remindOverdue === '1',
    ...body.fields,
    mode: q.mode,
    csv: body.csv,
  });
  const streamed = q.stream === '1' || (req.headers.get('accept') ?? '').includes('application/x-ndjson');
  if (!streamed) return importReviews(em, actor, input);
  return streamImport((onProgress) => importReviews(em, actor, input, { onProgress }));
}, { accept: ['application/json', 'multipart/form-data', 'text/csv'] });

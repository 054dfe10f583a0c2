import { z } from 'zod';
import { csvDownload, handler } from '@/lib/http';
import { readImportBody, streamImport } from '@/lib/http-import';
import { importReviews, ReviewImportFileInputSchema, ReviewImportInputSchema, reviewImportTemplate } from '@/lib/services/import-reviews';
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
 * POST /api/reviews/import?mode=dry-run|commit[&validRowsOnly=1][&remindOverdue=1] with the file
 * as a multipart field `file` (CSV or .xlsx, told by its content; with the mapping step's choices
 * as the JSON field `options`, as for the case import), or a CSV in the review template's form as
 * text/csv or JSON { csv, validRowsOnly?, remindOverdue? }. Answers the ReviewImportResult, or
 * streams NDJSON progress then the result (`Accept: application/x-ndjson` or ?stream=1).
 */
export const POST = handler('case.import', async ({ req, em, actor }) => {
  const q = parseInput(Query, searchParamsObject(req.url));
  const body = await readImportBody(req);
  const flags = { validRowsOnly: q.validRowsOnly === '1', remindOverdue: q.remindOverdue === '1', ...body.fields, mode: q.mode };
  const input = body.file
    ? parseInput(ReviewImportFileInputSchema, { ...flags, file: body.file, ...(body.options ? { options: body.options } : {}) })
    : parseInput(ReviewImportInputSchema, { ...flags, csv: body.csv });
  const streamed = q.stream === '1' || (req.headers.get('accept') ?? '').includes('application/x-ndjson');
  if (!streamed) return importReviews(em, actor, input);
  return streamImport((onProgress) => importReviews(em, actor, input, { onProgress }));
}, { accept: ['application/json', 'multipart/form-data', 'text/csv'] });

import { z } from 'zod';
import { csvDownload, handler } from '@/lib/http';
import { readImportBody, streamImport } from '@/lib/http-import';
import { ImportFileInputSchema, ImportInputSchema, importCases, importTemplate } from '@/lib/services/import';
import { parseInput } from '@/lib/services/parse';
import { searchParamsObject } from '@/lib/schemas/paging';

/** GET /api/cases/import → the CSV template (attachment). */
export const GET = handler('case.import', async () => {
  const t = importTemplate();
  return csvDownload(t.body, t.filename);
});

const Query = z.object({
  mode: z.enum(['dry-run', 'commit'], { error: 'Add ?mode=dry-run or ?mode=commit.' }),
  stream: z.enum(['0', '1']).optional(),
  /** 1: commit the valid rows and leave the rejected ones out (the result's rejectedCsv lists them with their reasons). */
  validRowsOnly: z.enum(['0', '1']).optional(),
});

/**
 * POST /api/cases/import?mode=dry-run|commit[&validRowsOnly=1] with the file as a multipart form field `file`
 * (CSV or .xlsx; with the mapping step's choices as the JSON field `options`), or a CSV in the
 * template's form as the body (text/csv) or as JSON { csv }. Answers the ImportResult as JSON — or, when
 * the request sends `Accept: application/x-ndjson` (or ?stream=1), streams NDJSON lines:
 * {type:'progress', phase, done, total} … then {type:'result', ...ImportResult}, or
 * {type:'error', status, message, fieldErrors} if it fails after the stream began.
 */
export const POST = handler('case.import', async ({ req, em, actor }) => {
  const q = parseInput(Query, searchParamsObject(req.url));
  // A CSV sent without the mapping step's options (multipart, text/csv or JSON { csv }) keeps the
  // template's strict reading; a JSON body's other fields are not read here (the flags are in the query).
  const body = await readImportBody(req);
  const flags = { mode: q.mode, validRowsOnly: q.validRowsOnly === '1' };
  const input = body.file
    ? parseInput(ImportFileInputSchema, { ...flags, file: body.file, ...(body.options ? { options: body.options } : {}) })
    : parseInput(ImportInputSchema, { ...flags, csv: body.csv });
  const streamed = q.stream === '1' || (req.headers.get('accept') ?? '').includes('application/x-ndjson');
  if (!streamed) return importCases(em, actor, input);
  return streamImport((onProgress) => importCases(em, actor, input, { onProgress }));
}, { accept: ['application/json', 'multipart/form-data', 'text/csv'] });

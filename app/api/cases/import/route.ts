import { z } from 'zod';
import { csvDownload, handler } from '@/lib/http';
import { decodeText, detectFormat } from '@/lib/import/read';
import { IMPORT_MAX_BYTES, ImportFileInputSchema, ImportInputSchema, importCases, importTemplate } from '@/lib/services/import';
import { parseOptionsField } from '@/lib/services/import-file';
import { ServiceError, ValidationError } from '@/lib/services/errors';
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
  const upload = { ...((await readUpload(req, q.mode)) as object), validRowsOnly: q.validRowsOnly === '1' };
  const input = upload && typeof upload === 'object' && 'file' in upload ? parseInput(ImportFileInputSchema, upload) : parseInput(ImportInputSchema, upload);
  const streamed = q.stream === '1' || (req.headers.get('accept') ?? '').includes('application/x-ndjson');
  if (!streamed) return importCases(em, actor, input);

  const encoder = new TextEncoder();
  const body = new ReadableStream<Uint8Array>({
    async start(controller) {
      const send = (line: unknown) => controller.enqueue(encoder.encode(`${JSON.stringify(line)}\n`));
      let last = 0;
      try {
        const result = await importCases(em, actor, input, {
          onProgress: (p) => {
            const now = Date.now();
            if (now - last >= 100 || p.done === p.total) {
              last = now;
              send({ type: 'progress', ...p });
            }
          },
        });
        send({ type: 'result', ...result });
      } catch (e) {
        if (!(e instanceof ServiceError)) console.error('[api] import failed', e);
        send(
          e instanceof ServiceError
            ? { type: 'error', status: e.status, message: e.message, fieldErrors: e.fieldErrors }
            : { type: 'error', status: 500, message: 'Something went wrong on our side. Nothing was imported.' },
        );
      } finally {
        controller.close();
      }
    },
  });
  return new Response(body, {
    headers: { 'Content-Type': 'application/x-ndjson; charset=utf-8', 'Cache-Control': 'no-store', 'X-Accel-Buffering': 'no' },
  });
}, { accept: ['application/json', 'multipart/form-data', 'text/csv'] });

/**
 * The request's file: multipart `file` (CSV or .xlsx, told by its content) with an optional
 * `options` field (JSON: sheet, dateOrder, decimalMark, columns, codes — lib/services/import-file.ts);
 * a CSV without options keeps the template's strict reading, as do text/csv and JSON { csv }.
 */
async function readUpload(req: Request, mode: 'dry-run' | 'commit'): Promise<unknown> {
  const length = Number(req.headers.get('content-length') ?? 0);
  if (length > IMPORT_MAX_BYTES + 64 * 1024) {
    throw new ServiceError(`The file is larger than ${IMPORT_MAX_BYTES / 1024 / 1024} MB: split it.`, 413);
  }
  const type = req.headers.get('content-type') ?? '';
  if (type.includes('multipart/form-data')) {
    const form = await req.formData().catch(() => {
      throw new ValidationError('The upload could not be read: send the file as the form field “file”.');
    });
    const file = form.get('file');
    if (file === null) throw new ValidationError('Some fields need attention.', { csv: ['Choose a CSV or .xlsx file to upload (form field “file”).'] });
    const bytes = typeof file === 'string' ? new TextEncoder().encode(file) : new Uint8Array(await file.arrayBuffer());
    const options = parseOptionsField(form.get('options'));
    if (!options && detectFormat(bytes).format === 'csv') return { mode, csv: decodeText(bytes) };
    return { mode, file: bytes, ...(options ? { options } : {}) };
  }
  if (type.includes('text/csv')) return { mode, csv: await req.text() };
  if (type.includes('application/json')) {
    const body = (await req.json().catch(() => {
      throw new ValidationError('The request body is not valid JSON.');
    })) as unknown;
    return { mode, csv: body && typeof body === 'object' ? (body as { csv?: unknown }).csv : undefined };
  }
  return { mode, csv: undefined }; // an empty body: handler() refused any other type
}

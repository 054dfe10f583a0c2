import 'server-only';
import { decodeText, detectFormat } from '@/lib/import/read';
import { IMPORT_MAX_BYTES, IMPORT_TOO_LARGE, type ImportProgress } from '@/lib/services/import';
import { parseOptionsField, type ImportFileOptions } from '@/lib/services/import-file';
import { ServiceError, ValidationError } from '@/lib/services/errors';

export interface ImportBody {
  /** A CSV in the template's form (text/csv, JSON { csv }, or a multipart CSV sent without options). */
  csv?: unknown;
  /** A practice's own file (multipart: .xlsx, or CSV with the mapping step's options). */
  file?: Uint8Array;
  options?: ImportFileOptions;
  /** The other fields of a JSON body. */
  fields: Record<string, unknown>;
}

/**
 * What the import routes share: reading the upload (multipart field `file` with an optional JSON
 * field `options`, text/csv, or JSON { csv, ...fields }) and streaming progress as NDJSON.
 */
export async function readImportBody(req: Request): Promise<ImportBody> {
  refuseLargeBody(req);
  const type = req.headers.get('content-type') ?? '';
  if (type.includes('multipart/form-data')) {
    const form = await req.formData().catch(() => {
      throw new ValidationError('The upload could not be read: send the file as the form field “file”.');
    });
    const file = form.get('file');
    if (file === null) throw new ValidationError('Some fields need attention.', { csv: ['Choose a CSV or .xlsx file to upload (form field “file”).'] });
    const bytes = typeof file === 'string' ? new TextEncoder().encode(file) : new Uint8Array(await file.arrayBuffer());
    const options = parseOptionsField(form.get('options'));
    if (!options && detectFormat(bytes).format === 'csv') return { csv: decodeText(bytes), fields: {} };
    return { file: bytes, ...(options ? { options } : {}), fields: {} };
  }
  if (type.includes('text/csv')) return { csv: await req.text(), fields: {} };
  if (type.includes('application/json')) {
    const body = (await req.json().catch(() => {
      throw new ValidationError('The request body is not valid JSON.');
    })) as unknown;
    if (!body || typeof body !== 'object' || Array.isArray(body)) return { csv: undefined, fields: {} };
    const { csv, ...fields } = body as Record<string, unknown>;
    return { csv, fields };
  }
  return { csv: undefined, fields: {} }; // an empty body: handler() refused any other type
}

/** 413 before reading a body whose declared length is past the largest import (and a form's overhead). */
function refuseLargeBody(req: Request): void {
  const length = Number(req.headers.get('content-length') ?? 0);
  if (length > IMPORT_MAX_BYTES + 64 * 1024) throw new ServiceError(IMPORT_TOO_LARGE, 413);
}

/**
 * The upload of the mapping step's preview (POST /api/cases/import/read, /api/reviews/import/read):
 * a multipart form with `file` (CSV or .xlsx, not empty, at most IMPORT_MAX_BYTES) and optionally
 * `sheet`.
 */
export async function readPreviewUpload(req: Request): Promise<{ bytes: Uint8Array; sheet: string | null }> {
  refuseLargeBody(req);
  const form = await req.formData().catch(() => {
    throw new ValidationError('The upload could not be read: send the file as the form field “file”.');
  });
  const file = form.get('file');
  if (file === null || typeof file === 'string') throw new ValidationError('Some fields need attention.', { file: ['Choose a CSV or .xlsx file (form field “file”).'] });
  if (file.size === 0) throw new ValidationError('Some fields need attention.', { file: ['The file is empty.'] });
  if (file.size > IMPORT_MAX_BYTES) throw new ServiceError(IMPORT_TOO_LARGE, 413);
  const sheet = form.get('sheet');
  if (sheet !== null && (typeof sheet !== 'string' || sheet.length > 200)) throw new ValidationError('Some fields need attention.', { sheet: ['Choose one of the workbook’s sheets.'] });
  return { bytes: new Uint8Array(await file.arrayBuffer()), sheet: sheet || null };
}

/**
 * Runs an import and streams NDJSON: {type:'progress', phase, done, total} (at most every
 * 100 ms) … then {type:'result', ...result}, or {type:'error', status, message, fieldErrors}.
 */
export function streamImport<T extends object>(run: (onProgress: (p: ImportProgress) => void) => Promise<T>): Response {
  const encoder = new TextEncoder();
  const body = new ReadableStream<Uint8Array>({
    async start(controller) {
      const send = (line: unknown) => controller.enqueue(encoder.encode(`${JSON.stringify(line)}\n`));
      let last = 0;
      try {
        const result = await run((p) => {
          const now = Date.now();
          if (now - last >= 100 || p.done === p.total) {
            last = now;
            send({ type: 'progress', ...p });
          }
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
}

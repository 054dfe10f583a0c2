import { handler } from '@/lib/http';
import { REVIEW_TEMPLATE } from '@/lib/registry/review-csv';
import { IMPORT_MAX_BYTES } from '@/lib/services/import';
import { previewImportFile } from '@/lib/services/import-file';
import { ServiceError, ValidationError } from '@/lib/services/errors';

/**
 * POST /api/reviews/import/read with a multipart form: `file` (CSV or .xlsx) and optionally
 * `sheet`. The mapping step's preview for the review template (lib/services/import-file.ts), as
 * /api/cases/import/read gives it for the case template. Writes nothing but the audit event.
 * A JSON body answers 422 (the file goes as multipart).
 */
export const POST = handler(
  'case.import',
  async ({ req, em, actor }) => {
    if (!(req.headers.get('content-type') ?? '').includes('multipart/form-data')) {
      throw new ValidationError('Some fields need attention.', { file: ['Send the file as the multipart form field “file”.'] });
    }
    const length = Number(req.headers.get('content-length') ?? 0);
    if (length > IMPORT_MAX_BYTES + 64 * 1024) throw new ServiceError(`The file is larger than ${IMPORT_MAX_BYTES / 1024 / 1024} MB: split it.`, 413);
    const form = await req.formData().catch(() => {
      throw new ValidationError('The upload could not be read: send the file as the form field “file”.');
    });
    const file = form.get('file');
    if (file === null || typeof file === 'string') throw new ValidationError('Some fields need attention.', { file: ['Choose a CSV or .xlsx file (form field “file”).'] });
    if (file.size === 0) throw new ValidationError('Some fields need attention.', { file: ['The file is empty.'] });
    if (file.size > IMPORT_MAX_BYTES) throw new ServiceError(`The file is larger than ${IMPORT_MAX_BYTES / 1024 / 1024} MB: split it.`, 413);
    const sheet = form.get('sheet');
    if (sheet !== null && (typeof sheet !== 'string' || sheet.length > 200)) throw new ValidationError('Some fields need attention.', { sheet: ['Choose one of the workbook’s sheets.'] });
    return previewImportFile(em, actor, REVIEW_TEMPLATE, new Uint8Array(await file.arrayBuffer()), sheet || null);
  },
  { accept: ['multipart/form-data', 'application/json'] },
);

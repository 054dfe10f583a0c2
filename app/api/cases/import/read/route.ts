import { handler } from '@/lib/http';
import { CASE_TEMPLATE } from '@/lib/import/case-template';
import { IMPORT_MAX_BYTES } from '@/lib/services/import';
import { previewImportFile } from '@/lib/services/import-file';
import { ServiceError, ValidationError } from '@/lib/services/errors';

/**
 * POST /api/cases/import/read with a multipart form: `file` (CSV or .xlsx, told by its content)
 * and optionally `sheet`. Answers the mapping step's preview (lib/services/import-file.ts): the
 * sheets, the columns with sample values and the proposed targets (the practice's saved mapping of
 * this layout, else the suggestions), the date order and decimal mark suggested and why. Writes
 * nothing but the audit event.
 */
export const POST = handler(
  'case.import',
  async ({ req, em, actor }) => {
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
    return previewImportFile(em, actor, CASE_TEMPLATE, new Uint8Array(await file.arrayBuffer()), sheet || null);
  },
  { accept: ['multipart/form-data'] },
);

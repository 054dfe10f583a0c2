import { handler } from '@/lib/http';
import { readPreviewUpload } from '@/lib/http-import';
import { REVIEW_TEMPLATE } from '@/lib/registry/review-csv';
import { previewImportFile } from '@/lib/services/import-file';
import { ValidationError } from '@/lib/services/errors';

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
    const { bytes, sheet } = await readPreviewUpload(req);
    return previewImportFile(em, actor, REVIEW_TEMPLATE, bytes, sheet);
  },
  { accept: ['multipart/form-data', 'application/json'] },
);

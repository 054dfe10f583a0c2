import { handler } from '@/lib/http';
import { readPreviewUpload } from '@/lib/http-import';
import { CASE_TEMPLATE } from '@/lib/import/case-template';
import { previewImportFile } from '@/lib/services/import-file';

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
    const { bytes, sheet } = await readPreviewUpload(req);
    return previewImportFile(em, actor, CASE_TEMPLATE, bytes, sheet);
  },
  { accept: ['multipart/form-data'] },
);

import { handler } from '@/lib/http';
import { openCohortDownload } from '@/lib/services/cohorts';
import { NotFoundError } from '@/lib/services/errors';
import { getObjectStream } from '@/lib/storage/s3';

/**
 * GET /api/cohort-exports/:id/download?token=… → the archive, for a signed link that has not
 * expired (410 when it has), to a researcher of the export's practice only; audited.
 */
export const GET = handler<{ id: string }>('cohort.export', async ({ em, actor, params, req }) => {
  const d = await openCohortDownload(em, actor, params.id, new URL(req.url).searchParams.get('token'));
  const o = await getObjectStream(d.key);
  if (!o) throw new NotFoundError('The archive is no longer stored; export the version again.');
  return new Response(o.body, {
    headers: {
      'Content-Type': 'application/zip',
      ...(o.size !== null ? { 'Content-Length': String(o.size) } : {}),
      'Content-Disposition': `attachment; filename="${d.filename}"`,
      'Cache-Control': 'no-store',
      'X-Content-Type-Options': 'nosniff',
      'Cross-Origin-Resource-Policy': 'same-origin',
    },
  });
});

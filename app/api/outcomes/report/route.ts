import { handler } from '@/lib/http';
import { searchParamsObject } from '@/lib/schemas/paging';
import { outcomesReportPdf } from '@/lib/services/outcomes-report';

/** The PDF is drawn in Node (@react-pdf/renderer, kept external by Next). */
export const runtime = 'nodejs';

/**
 * GET /api/outcomes/report?from&to&clinician&kind&factor&measure&adjust → the printable audit report
 * (application/pdf, as a download, not stored by caches); audited.
 */
export const GET = handler('outcomes.read', async ({ req, em, actor }) => {
  const { pdf, filename } = await outcomesReportPdf(em, actor, searchParamsObject(req.url));
  return new Response(new Uint8Array(pdf), {
    headers: {
      'Content-Type': 'application/pdf',
      'Content-Disposition': `attachment; filename="${filename}"`,
      'Content-Length': String(pdf.length),
      'Cache-Control': 'no-store',
      'X-Content-Type-Options': 'nosniff',
    },
  });
});

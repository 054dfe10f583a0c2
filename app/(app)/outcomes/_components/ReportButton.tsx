/** The printable audit report (issue 12, item 8): a PDF of the overview, the chosen factor, the clinician funnel and the methods, for the filters of the URL. */
export function ReportButton({ filters }: { filters: Record<string, string> }) {
  const q = new URLSearchParams();
  for (const k of ['from', 'to', 'clinician', 'kind', 'factor', 'measure', 'adjust']) if (filters[k]) q.set(k, filters[k]);
  const s = q.toString();
  return (
    <a className="btn-secondary no-underline" href={`/api/outcomes/report${s ? `?${s}` : ''}`} download data-testid="report-pdf">
      Download report (PDF)
    </a>
  );
}

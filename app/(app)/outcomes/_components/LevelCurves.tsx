import { AT_RISK_MONTHS, FEW_CASES, milestoneDays, TURNBULL_MAX, type Curve, type Curves } from '@/lib/outcomes';
import { ChartDownloads } from '@/components/charts/ChartDownloads';
import { Method, pct, pIs } from './parts';
import { SurvivalChart } from './SurvivalChartLazy';
import type { ChartSeries } from './SurvivalChart';

/** A step curve's value at time t (its last point at or before t). */
export const valueAt = (c: Curve, t: number) => {
  let v = 1;
  for (const p of c.points) if (p.time <= t) v = p.survival;
  return v;
};

/** The survival chart of the curves (one line per level; censoring marks under Kaplan–Meier), downloadable. */
export function LevelChart({ c, title, filename, testId }: { c: Curves; title: string; filename: string; testId: string }) {
  const series: ChartSeries[] = c.curves.map((cv) => ({
    name: `${cv.level} (n = ${cv.n})`,
    points: cv.points.map((p) => ({ time: p.time, value: p.survival, lower: p.lower, upper: p.upper })),
    censored: c.method === 'km' ? cv.censored.map((t) => ({ time: t, value: valueAt(cv, t) })) : undefined,
  }));
  return (
    <ChartDownloads filename={filename} title={title}>
      <div className="h-80 rounded-lg border border-bone-200 bg-white p-2" data-testid={testId}>
        <SurvivalChart series={series} yLabel={c.endpoint === 'tooth' ? 'Teeth kept' : 'Free of failure'} band={c.method === 'km'} />
      </div>
    </ChartDownloads>
  );
}

/** The numbers at risk at 0/6/12/24/36/48 months per level, (optionally) its events, and its estimate at 12/24/48 months. */
export function AtRiskTable({ curves, label, testId, rowTestId, events }: { curves: Curve[]; label: string; testId: string; rowTestId?: string; events?: boolean }) {
  return (
    <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
      <table className="table-dense table-stack w-full" aria-label={label} data-testid={testId}>
        <thead>
          <tr>
            <th scope="col">Numbers at risk</th>
            {AT_RISK_MONTHS.map((m) => (
              <th key={m} scope="col">
                {m} mo
              </th>
            ))}
            {events && <th scope="col">Events</th>}
            <th scope="col">Estimate at 12 / 24 / 48 mo</th>
          </tr>
        </thead>
        <tbody>
          {curves.map((cv) => (
            <tr key={cv.level} className={cv.n < FEW_CASES ? 'text-ink-500' : undefined} data-testid={rowTestId}>
              <td data-label="Level" className="font-semibold">
                {cv.level} {cv.n < FEW_CASES && <span className="ml-1 rounded border border-bone-300 px-1 text-xs font-normal">few cases</span>}
              </td>
              {cv.atRisk.map((n, i) => (
                <td key={AT_RISK_MONTHS[i]} data-label={`${AT_RISK_MONTHS[i]} months`}>
                  {n}
                </td>
              ))}
              {events && <td data-label="Events">{cv.events}</td>}
              <td data-label="At 12/24/48 mo">{[12, 24, 48].map((m) => pct(valueAt(cv, milestoneDays(m)), 1)).join(' / ')}</td>
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}

/**
 * Survival per level of a factor (the factor page, issue 12 item 2): the chart (downloadable),
 * the numbers at risk at 0/6/12/24/36/48 months under it, and the log-rank test across levels.
 */
export function LevelCurves({ c, title, filename }: { c: Curves; title: string; filename: string }) {
  return (
    <div className="space-y-3">
      {c.curves.length === 0 ? (
        <p className="text-ink-700">No completed cases in this filter.</p>
      ) : (
        <LevelChart c={c} title={title} filename={filename} testId="level-chart" />
      )}
      <AtRiskTable curves={c.curves} label="Numbers at risk per level" testId="level-at-risk" rowTestId="level-at-risk-row" events />
      <p data-testid="level-log-rank">
        {c.logRank
          ? `Log-rank test across the levels (χ² = ${c.logRank.chiSquare.toFixed(2)}, ${c.logRank.df} df): ${pIs(c.logRank.pValue)}.`
          : 'No log-rank test: fewer than two levels with cases, or no events.'}
      </p>
      <Method>
        {c.method === 'turnbull'
          ? 'Turnbull (NPMLE) for interval-censored times — a failure is found at a recall visit, so it happened some time since the last visit that found none'
          : c.asked === 'turnbull' && c.turnbullFailed
            ? 'Kaplan–Meier (the Turnbull estimate did not converge for some level), each event at the review that found it, log-scale 95% band (dotted), + marks a censored case'
            : c.asked === 'turnbull'
            ? `Kaplan–Meier (Turnbull is not computed above ${TURNBULL_MAX.toLocaleString('en-GB')} teeth), each event at the review that found it, log-scale 95% band (dotted), + marks a censored case`
            : 'Kaplan–Meier with each event at the review that found it, log-scale 95% band (dotted); + marks a censored case'}
        ; days since completion; at risk = still followed at that time; the log-rank test (Mantel–Haenszel, as R survdiff) uses the visit dates.
      </Method>
    </div>
  );
}

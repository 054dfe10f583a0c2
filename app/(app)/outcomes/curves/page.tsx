import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { FACTORS, milestoneDays, RMST_MONTHS, TURNBULL_MAX } from '@/lib/outcomes';
import { outcomesCurves } from '@/lib/services/outcomes';
import { Notice } from '@/components/ui/Notice';
import { ChartDownloads } from '@/components/charts/ChartDownloads';
import { ChoiceSelect, ENDPOINT_CHOICES, FACTOR_CHOICES, filtersOf, HiddenFilters, METHOD_CHOICES, Method, OutcomesHeader, pct, pIs } from '../_components/parts';
import { SurvivalChart } from '../_components/SurvivalChartLazy';
import { AtRiskTable, LevelChart } from '../_components/LevelCurves';
import type { ChartSeries } from '../_components/SurvivalChart';
import { viewData } from '../_components/viewData';

export const metadata: Metadata = { title: 'Survival curves' };

/** Days as months, one decimal (12 months = 365.25 days). */
const months = (days: number) => ((days * 12) / 365.25).toFixed(1);

export default async function OutcomesCurvesPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { em, actor } = await requireActor('outcomes.read', '/outcomes/curves');
  const filters = filtersOf(await searchParams);
  const { data, problems, own } = await viewData(actor, () => outcomesCurves(em, actor, filters));
  const c = data?.curves;
  const endpointWords = c?.endpoint === 'tooth' ? 'Tooth survival (event: extraction)' : 'Healing (failure: disease, retreatment, surgery or extraction)';
  const competing: ChartSeries[] = (c?.competing ?? []).map((cp) => ({
    name: cp.cause,
    points: [{ time: 0, value: 0, lower: 0, upper: 0 }, ...cp.points.map((p) => ({ time: p.time, value: p.incidence, lower: p.lower, upper: p.upper }))],
  }));
  return (
    <div className="space-y-8">
      <OutcomesHeader current="/outcomes/curves" asOf={data?.asOf} filters={filters} clinicians={data?.clinicians ?? []} own={own} problems={problems} csvView="curves" referrers={data?.referrers} />
      <form method="get" action="/outcomes/curves" aria-label="Choose the curves" className="flex flex-wrap items-end gap-3">
        <HiddenFilters filters={filters} />
        <ChoiceSelect id="curves-endpoint" name="endpoint" value={c?.endpoint ?? filters.endpoint ?? 'healing'} options={ENDPOINT_CHOICES} label="Endpoint" problems={problems} />
        <ChoiceSelect id="curves-method" name="method" value={c?.asked ?? filters.method ?? 'turnbull'} options={METHOD_CHOICES} label="Method" problems={problems} />
        <ChoiceSelect id="curves-factor" name="factor" value={c?.factor ?? filters.factor ?? ''} options={[['', 'No split'], ...FACTOR_CHOICES]} label="Split by" problems={problems} />
        <ChoiceSelect id="curves-stratum" name="stratum" value={c?.stratum ?? filters.stratum ?? ''} options={[['', 'No stratum'], ...FACTOR_CHOICES]} label="Log-rank stratified by" problems={problems} />
        <button type="submit" className="btn-primary">
          Show
        </button>
      </form>
      {!data && <Notice tone="alert">Some choices need attention; nothing is shown until they are corrected.</Notice>}
      {c && (
        <>
          <section aria-labelledby="curves-title" className="space-y-3">
            <h2 id="curves-title" className="text-2xl">
              {endpointWords}
            </h2>
            <Notice tone="info">
              {c.method === 'turnbull'
                ? 'Turnbull is the default: a failure is found at a recall visit, so it happened at some time since the last visit that found none. Kaplan–Meier would date it at the visit and overstate survival before it; switch to Kaplan–Meier to see its 95% band and censoring marks.'
                : c.asked === 'turnbull' && c.turnbullFailed
                  ? 'Kaplan–Meier shown: the Turnbull estimate did not settle (converge) for some group of these cases. It dates each failure at the visit that found it.'
                  : c.asked === 'turnbull'
                  ? `Kaplan–Meier shown: the Turnbull estimate is not computed above ${TURNBULL_MAX.toLocaleString('en-GB')} cases (it takes too long). It dates each failure at the visit that found it.`
                  : 'Kaplan–Meier dates each failure at the visit that found it (survival slightly overstated between visits); Turnbull, the default, does not.'}
            </Notice>
            <LevelChart
              c={c}
              filename={`lamina-${c.endpoint === 'tooth' ? 'tooth-survival' : 'healing'}${c.factor ? `-by-${c.factor}` : ''}`}
              title={`${endpointWords}${c.factor ? ` by ${FACTORS[c.factor].label.toLowerCase()}` : ''}`}
              testId="survival-chart"
            />
            <AtRiskTable curves={c.curves} label="Numbers at risk" testId="at-risk" />
            <p data-testid="log-rank">
              {c.logRank
                ? `${c.logRank.method.charAt(0).toUpperCase()}${c.logRank.method.slice(1)} across the ${c.curves.length} levels (χ² = ${c.logRank.chiSquare.toFixed(2)}, ${c.logRank.df} df): ${pIs(c.logRank.pValue)}.`
                : (c.logRankNote ?? 'No log-rank test: choose a factor with at least two levels and some events.')}
            </p>
            <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
              <table className="table-dense table-stack w-full" aria-label="Median and restricted mean survival" data-testid="median-rmst">
                <thead>
                  <tr>
                    <th scope="col">Level</th>
                    <th scope="col">Median (95% interval)</th>
                    <th scope="col">Restricted mean to {RMST_MONTHS} months (95% interval)</th>
                  </tr>
                </thead>
                <tbody>
                  {c.curves.map((cv) => (
                    <tr key={cv.level}>
                      <td data-label="Level" className="font-semibold">
                        {cv.level}
                      </td>
                      <td data-label="Median">
                        {cv.median.median === null
                          ? 'not reached'
                          : `${months(cv.median.median)} mo (${cv.median.lower === null ? 'not reached' : months(cv.median.lower)}–${cv.median.upper === null ? 'not reached' : months(cv.median.upper)})`}
                      </td>
                      <td data-label={`Restricted mean to ${RMST_MONTHS} mo`}>
                        {cv.rmst ? `${months(cv.rmst.mean)} mo (${months(cv.rmst.lower)}–${months(cv.rmst.upper)})` : `no case followed ${RMST_MONTHS} months`}
                      </td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
            <Method>
              {c.method === 'turnbull' ? 'Turnbull (NPMLE) for interval-censored times, survival at the end of each interval' : 'Kaplan–Meier with each event at the review that found it, log-scale 95% band (dotted); + marks a censored case'}
              ; days since completion, each {c.endpoint === 'tooth' ? 'tooth from its earliest case, followed through retreatment or surgery' : 'case censored at its last review'}; at risk = still
              followed at that time; the {c.logRank?.method ?? 'log-rank test (Mantel–Haenszel, as R survdiff)'} uses the visit dates, since Lamina has no
              interval-censored test{c.stratum ? ' (each stratum its own risk sets, summed before the χ²)' : ''}. Median and restricted mean from the Kaplan–Meier curve on
              the visit dates whichever curve is drawn: the median where the curve reaches 50%, its interval where the 95% band does (as R print(survfit));
              the restricted mean is the area under the curve to {RMST_MONTHS} months (time free of the event in the first {RMST_MONTHS} months), with R’s
              standard error and mean ± 1.96 SE.
            </Method>
          </section>
          <section aria-labelledby="competing-title" className="space-y-3">
            <h2 id="competing-title" className="text-2xl">
              Retreatment, apical surgery and extraction
            </h2>
            {competing.length === 0 ? (
              <p className="text-ink-700">None of these cases was retreated, operated on or extracted.</p>
            ) : (
              <>
                <ChartDownloads filename="lamina-retreatment-surgery-extraction" title="Cumulative incidence of retreatment, apical surgery and extraction">
                  <div className="h-64 rounded-lg border border-bone-200 bg-white p-2">
                    <SurvivalChart series={competing} yLabel="Cumulative incidence" band={false} />
                  </div>
                </ChartDownloads>
                <ul className="text-sm" data-testid="competing">
                  {c.competing.map((cp) => {
                    const at = (m: number) => [...cp.points].reverse().find((p) => p.time <= milestoneDays(m));
                    return (
                      <li key={cp.cause}>
                        <strong>{cp.cause}</strong>:{' '}
                        {[12, 24, 48]
                          .map((m) => {
                            const p = at(m);
                            return `${m} mo ${p ? `${pct(p.incidence, 1)} (${pct(p.lower, 1)}–${pct(p.upper, 1)})` : '0%'}`;
                          })
                          .join('; ')}
                      </li>
                    );
                  })}
                </ul>
              </>
            )}
            <Method>
              Aalen–Johansen cumulative incidence of each case’s first retreatment, apical surgery or extraction as competing events (its own date when recorded,
              else the review that found it), censored at the last review; log-scale 95% intervals.
            </Method>
          </section>
        </>
      )}
    </div>
  );
}

import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { BAND_WORDS, EVENTS_PER_PARAMETER, MIN_LEVEL_CASES, TERM_LABELS, type Band } from '@/lib/outcomes/funnel';
import { outcomesFunnel, tableRows, type FunnelReport } from '@/lib/services/outcomes-funnel';
import { Caution } from '@/components/ui/Caution';
import { Notice } from '@/components/ui/Notice';
import { filtersOf, Method, OutcomesHeader, pct, queryOf, RateText } from '../_components/parts';
import { FunnelChart } from '../_components/FunnelChartLazy';
import { ChartDownloads } from '@/components/charts/ChartDownloads';
import { viewData } from '../_components/viewData';

export const metadata: Metadata = { title: 'Clinician audit' };

function BandText({ band }: { band: Band | null }) {
  if (!band) return <span className="text-ink-500">—</span>;
  const outside = band !== 'within';
  return (
    <span className={outside ? 'font-semibold' : undefined}>
      {outside && <span aria-hidden="true">{band.startsWith('above') ? '▲ ' : '▼ '}</span>}
      {BAND_WORDS[band]}
    </span>
  );
}

export default async function OutcomesCliniciansPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { em, actor } = await requireActor('outcomes.read', '/outcomes/clinicians');
  const filters = filtersOf(await searchParams);
  const { data, problems, own } = await viewData(actor, () => outcomesFunnel(em, actor, filters));
  const choice = (key: 'measure' | 'adjust', value: string, label: string, current: string) => (
    <Link
      key={value}
      href={`/outcomes/clinicians${queryOf(filters, { [key]: value })}`}
      aria-current={current === value ? 'true' : undefined}
      className={`rounded-md border px-3 py-1 text-sm no-underline ${current === value ? 'border-ink-900 bg-ink-900 font-semibold text-white' : 'border-bone-300'}`}
    >
      {label}
    </Link>
  );
  const adjusted = data?.adjustShown === 'adjusted';
  const valueOf = (p: FunnelReport['points'][number]) => (adjusted ? p.adjusted : p.crude.estimate);
  const rows = data ? tableRows(data) : [];
  // each point's mark on the chart: the lead's points numbered as in the table, a clinician's own "You"
  const markOf = new Map((data?.points ?? []).map((p, i) => [p.key, own ? 'You' : String(i + 1)]));
  return (
    <div className="space-y-8">
      <OutcomesHeader current="/outcomes/clinicians" asOf={data?.asOf} filters={filters} clinicians={data?.clinicians ?? []} own={own} problems={problems} csvView="funnel" />
      {!data && <Notice tone="alert">Some choices need attention; nothing is shown until they are corrected.{problems.measure?.[0] ? ` ${problems.measure[0]}` : ''}{problems.adjust?.[0] ? ` ${problems.adjust[0]}` : ''}</Notice>}
      {data && (
        <section aria-labelledby="funnel-title" className="space-y-4">
          <div>
            <h2 id="funnel-title" className="text-2xl">
              Clinician audit: {data.measureLabel}
            </h2>
            <p className="mt-1 max-w-3xl text-ink-700">
              {own
                ? 'Your point (named, ◆) against every clinician of the practice for the period and kind chosen; the others are shown without names.'
                : 'Every clinician of the practice for the period and kind chosen, numbered as in the table; the clinician filter highlights one point (◆).'}
            </p>
          </div>
          <div className="flex flex-wrap gap-4">
            <div className="flex flex-wrap items-center gap-2" role="group" aria-label="Measure">
              <span className="text-sm font-semibold">Measure:</span>
              {choice('measure', 'm12', 'At 12 months', data.measure)}
              {choice('measure', 'latest', 'Latest review ≥ 12 months', data.measure)}
            </div>
            <div className="flex flex-wrap items-center gap-2" role="group" aria-label="Adjustment">
              <span className="text-sm font-semibold">Rates:</span>
              {choice('adjust', 'crude', 'Crude', data.adjust)}
              {choice('adjust', 'adjusted', 'Risk-adjusted', data.adjust)}
            </div>
          </div>
          {data.modelNote && data.adjust === 'adjusted' && <Notice tone="info">{data.modelNote} The crude rates are shown.</Notice>}
          <Caution text={data.caution} />
          <div className="grid gap-6 lg:grid-cols-[3fr_2fr]">
            <div>
              {data.curve.length === 0 ? (
                <Notice tone="info">
                  No funnel: {data.practice.n === 0 ? 'no case has a judged outcome for this measure yet' : 'every judged case had the same result, so there is no spread to draw limits around'}.
                </Notice>
              ) : (
                <ChartDownloads filename={`lamina-clinician-funnel-${adjusted ? 'adjusted' : 'crude'}`} title={`Funnel plot: ${adjusted ? 'risk-adjusted' : 'crude'} ${data.measureLabel} per clinician`}>
                  <div id="funnel-chart" className="h-96 rounded-lg border border-bone-200 bg-white p-2" data-testid="funnel-chart" role="img" aria-label={`Funnel plot of ${adjusted ? 'risk-adjusted' : 'crude'} ${data.measureLabel} per clinician`}>
                    <FunnelChart
                      points={data.points.filter((p) => valueOf(p) !== null).map((p) => ({ key: p.key, label: p.label, n: p.n, value: valueOf(p)!, highlighted: p.highlighted, mark: markOf.get(p.key)!, named: !own || p.own }))}
                      curve={data.curve}
                      centre={data.practice.estimate}
                      references={data.literature.map((l) => ({ rate: l.rate, label: l.label }))}
                      yLabel={adjusted ? 'Risk-adjusted strict success' : 'Strict success'}
                    />
                  </div>
                </ChartDownloads>
              )}
            </div>
            <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
              <table className="table-dense table-stack w-full" aria-label="Clinicians against the practice" data-testid="funnel-table">
                <thead>
                  <tr>
                    <th scope="col">Clinician</th>
                    <th scope="col">Crude</th>
                    <th scope="col">O / E</th>
                    <th scope="col">Risk-adjusted</th>
                    <th scope="col">Against the limits</th>
                  </tr>
                </thead>
                <tbody>
                  {rows.length === 0 && (
                    <tr>
                      <td colSpan={5} className="text-ink-500">
                        {own ? 'You have no completed cases in this filter.' : 'No completed cases in this filter.'}
                      </td>
                    </tr>
                  )}
                  {rows.map((p) => (
                    <tr key={p.key} data-testid="funnel-row" className={p.highlighted ? 'bg-bone-100' : undefined}>
                      <td data-label="Clinician" className="font-semibold">
                        {p.highlighted && <span aria-hidden="true">◆ </span>}
                        {!own && (
                          <span className="mr-1 inline-block min-w-5 rounded bg-bone-200 px-1 text-center text-xs" title="Its number on the chart">
                            {markOf.get(p.key)}
                          </span>
                        )}
                        {p.label}
                        <span className="block text-xs font-normal text-ink-500">{p.cases} cases</span>
                      </td>
                      <td data-label="Crude">
                        <RateText r={p.crude} />
                      </td>
                      <td data-label="O / E">{p.oe === null ? '—' : `${p.observed} / ${p.expected!.toFixed(1)} = ${p.oe.toFixed(2)}`}</td>
                      <td data-label="Risk-adjusted">{pct(p.adjusted, 1)}</td>
                      <td data-label="Against the limits">
                        <BandText band={adjusted ? p.adjustedBand : p.crudeBand} />
                      </td>
                    </tr>
                  ))}
                  <tr data-testid="funnel-practice">
                    <td data-label="Clinician" className="font-semibold">
                      The practice
                      <span className="block text-xs font-normal text-ink-500">{data.cases} cases</span>
                    </td>
                    <td data-label="Crude">
                      <RateText r={data.practice} />
                    </td>
                    <td data-label="O / E">—</td>
                    <td data-label="Risk-adjusted">—</td>
                    <td data-label="Against the limits">centre line</td>
                  </tr>
                </tbody>
              </table>
            </div>
          </div>
          <Method>
            {data.measureLabel} by Lamina’s scoring rules (“uncertain” and cases without a known outcome left out of n). Centre line: the practice’s rate over every clinician’s judged cases;
            limits: exact binomial 95% and 99.8% limits around it for n cases (Spiegelhalter 2005, Funnel plots for comparing institutional performance, Stat Med 24:1185–1202).{' '}
            {data.model
              ? `Risk-adjusted (indirect standardisation): a logistic case-mix model on ${data.model.terms.map((t) => TERM_LABELS[t]).join(', ')}, fitted on the practice’s ${data.model.n} judged cases; a clinician’s expected successes E are the sum of the model’s probabilities for their cases, and the adjusted rate is O/E × the practice’s rate, shown against the same limits (an approximation).${data.model.left.length ? ` Left out of the model: ${data.model.left.map((l) => `${TERM_LABELS[l.term]} (${l.reason})`).join('; ')}.` : ''}${Object.entries(data.model.merged).length ? ` Joined to the commonest level (fewer than ${MIN_LEVEL_CASES} cases or no variation): ${Object.values(data.model.merged).map((m) => m.levels.join(', ')).join('; ')}.` : ''} At least ${EVENTS_PER_PARAMETER} of the rarer result per coefficient.`
              : (data.modelNote ?? '')}
          </Method>
          {data.literature.length > 0 && (
            <div className="text-xs text-ink-500" data-testid="funnel-literature">
              <p className="font-semibold">Reference lines (published pooled strict success, for orientation; the studies pooled a year or more of follow-up):</p>
              <ul className="list-disc pl-5">
                {data.literature.map((l) => (
                  <li key={l.label}>{l.source}</li>
                ))}
              </ul>
            </div>
          )}
        </section>
      )}
    </div>
  );
}

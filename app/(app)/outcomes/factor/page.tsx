import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { FACTORS } from '@/lib/outcomes';
import { outcomesByFactor } from '@/lib/services/outcomes';
import { Notice } from '@/components/ui/Notice';
import { ChoiceSelect, ENDPOINT_CHOICES, FACTOR_CHOICES, filtersOf, HiddenFilters, METHOD_CHOICES, Method, OutcomesHeader, pIs, RateText, withLevel } from '../_components/parts';
import { LevelCurves } from '../_components/LevelCurves';
import { viewData } from '../_components/viewData';

export const metadata: Metadata = { title: 'Outcomes by factor' };

export default async function OutcomesFactorPage({ searchParams }: { searchParams: Promise<Record<string, string | string[] | undefined>> }) {
  const { em, actor } = await requireActor('outcomes.read', '/outcomes/factor');
  const filters = filtersOf(await searchParams);
  const { data, problems, own } = await viewData(actor, () => outcomesByFactor(em, actor, filters));
  const factor = data?.factor ?? 'kind';
  const test = data?.table.test ?? null;
  const canFilter = factor !== 'clinician' || !own;
  return (
    <div className="space-y-8">
      <OutcomesHeader current="/outcomes/factor" asOf={data?.asOf} filters={filters} clinicians={data?.clinicians ?? []} own={own} problems={problems} csvView="factor" referrers={data?.referrers} />
      <form method="get" action="/outcomes/factor" aria-label="Choose a factor" className="flex flex-wrap items-end gap-3">
        <HiddenFilters filters={filters} />
        <ChoiceSelect id="outcomes-factor" name="factor" value={factor} options={FACTOR_CHOICES} label="How do we do by…" problems={problems} />
        <ChoiceSelect id="factor-endpoint" name="endpoint" value={data?.curves.endpoint ?? filters.endpoint ?? 'healing'} options={ENDPOINT_CHOICES} label="Curves of" problems={problems} />
        <ChoiceSelect id="factor-method" name="method" value={data?.curves.asked ?? filters.method ?? 'turnbull'} options={METHOD_CHOICES} label="Method" problems={problems} />
        <button type="submit" className="btn-primary">
          Show
        </button>
      </form>
      {!data && <Notice tone="alert">Some choices need attention; nothing is shown until they are corrected.</Notice>}
      {data && (
        <section aria-labelledby="factor-title" className="space-y-2">
          <h2 id="factor-title" className="text-2xl">
            Success by {FACTORS[factor].label.toLowerCase()}
          </h2>
          <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
            <table className="table-dense table-stack w-full" aria-label={`Success by ${FACTORS[factor].label.toLowerCase()}`}>
              <thead>
                <tr>
                  <th scope="col">{FACTORS[factor].label}</th>
                  <th scope="col">Cases</th>
                  <th scope="col">Strict (healed)</th>
                  <th scope="col">Lenient (healed or healing)</th>
                  <th scope="col">Uncertain</th>
                  {canFilter && (
                    <th scope="col">
                      <span className="sr-only">Filter</span>
                    </th>
                  )}
                </tr>
              </thead>
              <tbody>
                {data.table.levels.length === 0 && (
                  <tr>
                    <td colSpan={canFilter ? 6 : 5} className="text-ink-500">
                      No completed cases in this filter.
                    </td>
                  </tr>
                )}
                {data.table.levels.map((l) => (
                  <tr key={l.level} data-testid="factor-level">
                    <td data-label="Level" className="font-semibold">
                      {l.level}
                    </td>
                    <td data-label="Cases">{l.cases}</td>
                    <td data-label="Strict">
                      <RateText r={l.strict} />
                    </td>
                    <td data-label="Lenient">
                      <RateText r={l.lenient} />
                    </td>
                    <td data-label="Uncertain">{l.uncertain}</td>
                    {canFilter && (
                      <td data-label="Filter">
                        <a href={withLevel('/outcomes/factor', filters, factor, l.code)} className="text-sm">
                          Only this level<span className="sr-only">: {l.level}</span>
                        </a>
                      </td>
                    )}
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
          <p data-testid="factor-test">
            {test === null
              ? 'No test: fewer than two levels with judged cases, or every judged case had the same result.'
              : `${test.method === 'fisher' ? 'Fisher’s exact test' : `Pearson’s χ² test (χ² = ${test.chiSquare!.toFixed(2)}, ${test.df} df)`}: ${pIs(test.pValue)}${test.sparse ? ' — some expected counts are below 5, read it with care' : ''}.`}
          </p>
          <Method>
            outcome at the latest review a year or more after completion by Lamina’s scoring rules (a retreatment, surgery or extraction at any time counts as failure;
            “uncertain” left out of n); Wilson 95% intervals; the test compares strict success across the levels with judged cases (Fisher’s exact for two, Pearson’s χ² for
            more). “Only this level” keeps the filter for every view (the chips above remove it).
          </Method>
        </section>
      )}
      {data && (
        <section aria-labelledby="factor-curves-title" className="space-y-2">
          <h2 id="factor-curves-title" className="text-2xl">
            {data.curves.endpoint === 'tooth' ? 'Tooth survival' : 'Healing over time'} by {FACTORS[factor].label.toLowerCase()}
          </h2>
          <LevelCurves
            c={data.curves}
            title={`${data.curves.endpoint === 'tooth' ? 'Tooth survival' : 'Free of healing failure'} by ${FACTORS[factor].label.toLowerCase()}`}
            filename={`lamina-${data.curves.endpoint === 'tooth' ? 'tooth-survival' : 'healing'}-by-${factor}`}
          />
        </section>
      )}
    </div>
  );
}

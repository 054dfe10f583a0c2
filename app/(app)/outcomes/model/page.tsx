import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { FACTORS } from '@/lib/outcomes';
import { COVARIATE_KEYS, EPV_MIN, MIN_LEVEL_ROWS, type ModelFit } from '@/lib/outcomes/model';
import { outcomesModel } from '@/lib/services/outcomes-model';
import { Caution } from '@/components/ui/Caution';
import { Notice } from '@/components/ui/Notice';
import { filtersOf, FILTER_KEYS, Method, OutcomesHeader, pText } from '../_components/parts';
import { ForestPlot } from '../_components/ForestPlotLazy';
import { ChartDownloads } from '@/components/charts/ChartDownloads';
import { viewData } from '../_components/viewData';

export const metadata: Metadata = { title: 'Outcomes: multivariable' };

type Params = Record<string, string | string[] | undefined>;

/** The page's choices from the URL: `covariate` repeated (the form's checkboxes) or `covariates` as a comma list (links, CSV). */
function choicesOf(params: Params): Record<string, string> {
  const out: Record<string, string> = {};
  const list = [params.covariate, params.covariates].flat().filter((v): v is string => typeof v === 'string' && v !== '');
  if (list.length) out.covariates = list.join(',');
  for (const k of ['lesionAs', 'paiAs'] as const) {
    const v = params[k];
    if (typeof v === 'string' && v !== '') out[k] = v;
  }
  return out;
}

const fmt = (v: number) => (v >= 100 || v < 0.01 ? v.toExponential(1) : v.toFixed(2));

const MODEL_TEXT = {
  cox: { ratio: 'Hazard ratio', short: 'HR', unit: (endpoint: string) => (endpoint === 'tooth' ? 'teeth' : 'cases') },
  logistic: { ratio: 'Odds ratio', short: 'OR', unit: () => 'cases' },
} as const;

function ModelSection({ fit, title, id, endpoint, method, above }: { fit: ModelFit; title: string; id: string; endpoint: string; method: React.ReactNode; above: string }) {
  const t = MODEL_TEXT[fit.model];
  // the table: per factor, its reference level first, then its other levels
  const rows: { key: string; factor: string; level: string; term: ModelFit['terms'][number] | null }[] = [];
  for (const term of fit.terms) {
    const ref = fit.references.find((r) => r.covariate === term.covariate);
    if (ref && !rows.some((r) => r.key === `ref-${ref.covariate}`)) rows.push({ key: `ref-${ref.covariate}`, factor: ref.label, level: `${ref.level} (reference)`, term: null });
    rows.push({ key: `${term.covariate}-${term.term}`, factor: term.label, level: term.term, term });
  }
  const events = fit.model === 'cox' ? `${fit.events} ${endpoint === 'tooth' ? 'teeth lost' : 'failures'}` : `${fit.successes ?? 0} healed, ${fit.failures ?? 0} not healed`;
  return (
    <section aria-labelledby={id} className="space-y-3" data-testid={`model-${fit.model}`}>
      <h2 id={id} className="text-2xl">
        {title}
      </h2>
      <p data-testid={`model-${fit.model}-counts`}>
        {fit.cases} {t.unit(endpoint)} of {fit.patients} patients; {events}; {fit.parameters} coefficient{fit.parameters === 1 ? '' : 's'}
        {fit.epv !== null && `; ${fit.epv.toFixed(1)} events per variable`}.
      </p>
      {fit.lowEpv && (
        <Notice tone="alert" role="status">
          <span data-testid={`model-${fit.model}-epv`}>
            Fewer than {EPV_MIN} events per variable ({fit.events} {fit.model === 'logistic' ? 'of the rarer outcome' : 'events'} for {fit.parameters} coefficients). Below {EPV_MIN}, the estimates
            may be biased and the intervals unreliable (Peduzzi et al. 1995 for Cox models, 1996 for logistic regression). Choose fewer factors or a wider selection.
          </span>
        </Notice>
      )}
      {fit.error && (
        <Notice tone="alert" role="status">
          <span data-testid={`model-${fit.model}-error`}>{fit.error}</span>
        </Notice>
      )}
      {fit.terms.length > 0 && (
        <>
          <ChartDownloads filename={`lamina-${fit.model}-model`} title={title}>
            <div className="w-full" style={{ height: 70 + 34 * fit.terms.length }} data-testid={`model-${fit.model}-forest`} aria-label={`Forest plot: ${t.ratio.toLowerCase()}s with 95% intervals`} role="img">
              <ForestPlot ratioLabel={t.ratio} rows={fit.terms.map((x) => ({ name: `${x.label.replace(' before treatment', '')}: ${x.term}`, ratio: x.ratio, lower: x.lower, upper: x.upper }))} />
            </div>
          </ChartDownloads>
          <p className="text-xs text-ink-500">{above}</p>
          <div className="overflow-x-auto rounded-lg border border-bone-200 bg-white">
            <table className="table-dense table-stack w-full" aria-label={`${title}: table`}>
              <thead>
                <tr>
                  <th scope="col">Factor</th>
                  <th scope="col">Level</th>
                  <th scope="col">{t.ratio}</th>
                  <th scope="col">95% interval</th>
                  <th scope="col">p</th>
                </tr>
              </thead>
              <tbody>
                {rows.map((r) => (
                  <tr key={r.key} data-testid={r.term ? `model-${fit.model}-term` : undefined}>
                    <td data-label="Factor">{r.factor}</td>
                    <td data-label="Level" className={r.term ? undefined : 'text-ink-500'}>
                      {r.level}
                    </td>
                    <td data-label={t.short} data-ratio={r.term?.ratio}>
                      {r.term ? <strong className="font-semibold">{fmt(r.term.ratio)}</strong> : '1'}
                    </td>
                    <td data-label="95% interval">{r.term ? `${fmt(r.term.lower)}–${fmt(r.term.upper)}` : '—'}</td>
                    <td data-label="p">{r.term ? pText(r.term.pValue) : '—'}</td>
                  </tr>
                ))}
              </tbody>
            </table>
          </div>
        </>
      )}
      {fit.notes.length > 0 && (
        <ul className="list-disc pl-5 text-sm text-ink-700" aria-label="Notes on the model">
          {fit.notes.map((n) => (
            <li key={n}>{n}</li>
          ))}
        </ul>
      )}
      <Method>{method}</Method>
    </section>
  );
}

export default async function OutcomesModelPage({ searchParams }: { searchParams: Promise<Params> }) {
  const { em, actor } = await requireActor('outcomes.read', '/outcomes/model');
  const params = await searchParams;
  const filters = { ...filtersOf(params), ...choicesOf(params) };
  const { data, problems, own } = await viewData(actor, () => outcomesModel(em, actor, filters));
  const chosen = new Set<string>(data?.chosen.covariates ?? []);
  const lesionAs = data?.chosen.lesionAs ?? 'bands';
  const paiAs = data?.chosen.paiAs ?? 'numeric';
  const endpoint = data?.result.endpoint ?? 'healing';
  const offered = COVARIATE_KEYS.filter((k) => !(own && k === 'clinician'));
  const radio = (name: string, value: string, current: string, label: string) => (
    <label className="mr-3 inline-flex items-center gap-1 text-sm">
      <input type="radio" name={name} value={value} defaultChecked={current === value} /> {label}
    </label>
  );
  return (
    <div className="space-y-8">
      <OutcomesHeader current="/outcomes/model" asOf={data?.asOf} filters={filters} clinicians={data?.clinicians ?? []} own={own} problems={problems} csvView="model" />
      <form method="get" action="/outcomes/model" aria-label="Choose the factors" className="card space-y-4">
        {FILTER_KEYS.map((k) => filters[k] && <input key={k} type="hidden" name={k} value={filters[k]} />)}
        <fieldset>
          <legend className="field-label">Factors in the models</legend>
          <div className="grid gap-1 sm:grid-cols-2 lg:grid-cols-4">
            {offered.map((k) => (
              <label key={k} className="inline-flex items-center gap-2 text-sm">
                <input type="checkbox" name="covariate" value={k} defaultChecked={chosen.has(k)} /> {FACTORS[k].label}
              </label>
            ))}
          </div>
          {problems.covariates && <p className="field-error">{problems.covariates[0]}</p>}
        </fieldset>
        <div className="grid gap-4 md:grid-cols-3">
          <fieldset>
            <legend className="field-label">Lesion size enters as</legend>
            {radio('lesionAs', 'bands', lesionAs, 'Bands')}
            {radio('lesionAs', 'numeric', lesionAs, 'Diameter, per mm')}
          </fieldset>
          <fieldset>
            <legend className="field-label">PAI before treatment enters as</legend>
            {radio('paiAs', 'numeric', paiAs, 'Score, per point')}
            {radio('paiAs', 'levels', paiAs, 'Levels')}
          </fieldset>
          <div>
            <label htmlFor="model-endpoint" className="field-label">
              Cox model of
            </label>
            <select id="model-endpoint" name="endpoint" defaultValue={endpoint} className="field-input" aria-invalid={problems.endpoint ? true : undefined}>
              <option value="healing">Failure to heal</option>
              <option value="tooth">Tooth loss</option>
            </select>
            {problems.endpoint && <p className="field-error">{problems.endpoint[0]}</p>}
          </div>
        </div>
        <p className="text-xs text-ink-500">
          Lesion size in bands (the default) makes no assumption about its shape: the step from no lesion to a lesion need not be like a step between sizes. As a diameter it
          costs one coefficient instead of up to three (useful when events are few) but assumes each extra millimetre multiplies the risk alike. PAI before treatment as a
          score (the default) likewise costs one coefficient and assumes equal steps between scores; as levels it assumes nothing and costs up to four. With no factor ticked,
          treatment kind, lesion size and PAI are used. Each factor’s reference level is its most frequent one; a level with fewer than {MIN_LEVEL_ROWS} cases is merged
          with a neighbour (ordered factors) or pooled, or left out, as the notes say.
        </p>
        <button type="submit" className="btn-primary">
          Fit the models
        </button>
      </form>
      <Caution text="These are associations in the practice’s own cases, not causes: a factor chosen by the clinician for a reason (e.g. retreatment of a difficult tooth) carries that reason with it. The models support clinical judgement and do not replace it." />
      {!data && <Notice tone="alert">Some choices need attention; nothing is shown until they are corrected.</Notice>}
      {data && (
        <>
          <ModelSection
            fit={data.result.cox}
            id="model-cox-title"
            title={endpoint === 'tooth' ? 'Time to tooth loss: Cox model' : 'Time to failure to heal: Cox model'}
            endpoint={endpoint}
            above="A hazard ratio above 1: failure sooner than in the reference level, other factors held equal; an interval crossing 1 is compatible with no difference."
            method={
              <>
                Cox proportional hazards model (Efron’s ties) of the time to {endpoint === 'tooth' ? 'extraction (each tooth once, followed across later cases)' : 'failure to heal (disease, retreatment, apical surgery or extraction)'}.
                Failures are found at recall visits, so the time is taken at the midpoint between the last clear review and the one that found it (less biased than the
                visit date when recall intervals differ between teeth; Law &amp; Brookmeyer 1992); cases without failure are censored at their last review, cases without a review
                left out. 95% intervals and p-values from robust standard errors clustered by patient, since one patient may have several teeth (Lin &amp; Wei 1989; as R’s
                coxph with cluster).
              </>
            }
          />
          <ModelSection
            fit={data.result.logistic}
            id="model-logistic-title"
            title="Strict success at 12 months: logistic model"
            endpoint={endpoint}
            above="An odds ratio above 1: healing more likely than in the reference level, other factors held equal; an interval crossing 1 is compatible with no difference."
            method={
              <>
                Logistic regression of strict success (healed) at the 12-month review (the review nearest 12 months within ± 3 months; a retreatment, surgery or extraction found
                by then is a failure; cases scored uncertain or not seen left out). Odds ratios with 95% intervals and p-values from cluster-robust standard errors by patient (HC1,
                as R’s sandwich::vcovCL). Events per variable count the rarer outcome.
              </>
            }
          />
        </>
      )}
    </div>
  );
}

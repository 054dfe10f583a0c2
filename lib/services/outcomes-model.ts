import 'server-only';
import type { DataAsOf } from './outcomes-cache';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Actor } from '@/lib/auth/actor';
import { writeCsv } from '@/lib/csv/write';
import { applyFilter, type FactorKey, type OutcomeFilter } from '@/lib/outcomes';
import { DEFAULT_COVARIATES, EPV_MIN, multivariable, type CovariateChoice, type ModelFit, type Multivariable } from '@/lib/outcomes/model';
import { OutcomeModelQuery } from '@/lib/schemas/outcomes-model';
import { audit, auditRead } from './audit';
import { filterDetail, levelNamer, scope } from './outcomes';
import { parseInput } from './parse';

/**
 * The multivariable view of the outcomes area (issue 12, item 4): the shared scope (a clinician's own
 * cases only), then lib/outcomes/model computes a Cox model and a logistic model on the same selection.
 */
export interface ModelReport {
  filter: OutcomeFilter;
  own: boolean;
  /** when the figures' rows were read, and whether entries were saved since (lib/services/outcomes-cache.ts) */
  asOf: DataAsOf;
  clinicians: { id: string; name: string }[];
  /** the choices as read (for the form) */
  chosen: { covariates: FactorKey[]; lesionAs: 'bands' | 'numeric'; paiAs: 'numeric' | 'levels' };
  result: Multivariable;
}

export function covariateChoices(q: Pick<OutcomeModelQuery, 'covariates' | 'lesionAs' | 'paiAs'>): CovariateChoice[] {
  if (!q.covariates) return DEFAULT_COVARIATES.map((c) => ({ ...c, numeric: c.key === 'lesion' ? q.lesionAs === 'numeric' : c.key === 'pai' ? q.paiAs === 'numeric' : undefined }));
  return [...new Set(q.covariates as FactorKey[])].map((key) =>
    key === 'lesion' ? { key, numeric: q.lesionAs === 'numeric' } : key === 'pai' ? { key, numeric: q.paiAs === 'numeric' } : { key },
  );
}

/** The model's figures for the actor's choices, kept per data version (no audit: callers audit). */
export async function modelFigures(em: EntityManager, actor: Actor, raw: unknown) {
  const q = parseInput(OutcomeModelQuery, raw ?? {});
  const s = await scope(em, actor, q);
  // open factors' levels (clinician and referrer ids) shown by name, as in the factor view
  const namers = { clinician: levelNamer(s, 'clinician')!, referrer: levelNamer(s, 'referrer')! };
  const choices = covariateChoices(q);
  const result = s.memo(['model', s.filter, choices, q.endpoint, s.clinicians, s.referrers], (all) =>
    multivariable(applyFilter(all, s.filter), all, choices, {
      endpoint: q.endpoint,
      minObs: s.minObs,
      levelName: (key, level) => (key === 'clinician' || key === 'referrer' ? namers[key](level) : level),
    }),
  );
  const chosen = { covariates: choices.map((c) => c.key), lesionAs: q.lesionAs, paiAs: q.paiAs };
  return { s, q, result, chosen };
}

export async function outcomesModel(em: EntityManager, actor: Actor, raw: unknown): Promise<ModelReport> {
  const { s, q, result, chosen } = await modelFigures(em, actor, raw);
  await auditRead(em, actor, {
    action: 'outcomes.model_read',
    detail: { ...filterDetail(s.filter), endpoint: q.endpoint, covariates: chosen.covariates.join(','), coxCases: result.cox.cases, logisticCases: result.logistic.cases },
  });
  return { filter: s.filter, own: s.own, asOf: s.asOf, clinicians: s.clinicians, chosen, result };
}

const MODEL_WORDS = { cox: 'Cox', logistic: 'Logistic' } as const;

function tableRows(fit: ModelFit, outcome: string): (string | number | null)[][] {
  const ratio = fit.model === 'cox' ? 'hazard ratio' : 'odds ratio';
  // a summary line: the figure's name in the Factor column, its value in the Level column
  const line = (what: string, value: string | number) => [MODEL_WORDS[fit.model], outcome, what, String(value)];
  const summary = [
    line('Cases', fit.cases),
    line('Patients', fit.patients),
    line(fit.model === 'cox' ? 'Events' : 'Events (the rarer outcome)', fit.events),
    line('Events per variable', fit.epv === null ? '' : fit.epv.toFixed(1)),
    ...(fit.lowEpv ? [line('Warning', `Fewer than ${EPV_MIN} events per variable (Peduzzi et al. 1995, 1996): the estimates may be unstable`)] : []),
    ...(fit.error ? [line('Not fitted', fit.error)] : []),
    ...fit.references.map((r) => line(`Reference: ${r.label}`, r.level)),
    ...fit.notes.map((n) => line('Note', n)),
  ];
  const terms = fit.terms.map((t) => [MODEL_WORDS[fit.model], outcome, t.label, t.numeric ? t.term : `${t.term} vs ${t.reference}`, ratio, t.ratio, t.lower, t.upper, t.pValue, t.robustSe]);
  return [...summary, ...terms];
}

/** Both tables as one CSV through the one CSV writer (lib/csv/write.ts); the download is audited. */
export async function outcomesModelCsv(em: EntityManager, actor: Actor, raw: unknown): Promise<string> {
  const { s, q, result, chosen } = await modelFigures(em, actor, raw);
  const header = ['Model', 'Outcome', 'Factor', 'Level (vs reference)', 'Ratio', 'Estimate', '95% lower', '95% upper', 'p', 'Robust SE (log scale, by patient)'];
  const coxOutcome = result.endpoint === 'tooth' ? 'Time to tooth loss' : 'Time to failure to heal';
  const rows = [...tableRows(result.cox, coxOutcome), ...tableRows(result.logistic, 'Strict success (healed) at 12 months')];
  await audit(em, actor, { action: 'outcomes.exported', detail: { view: 'model', ...filterDetail(s.filter), endpoint: q.endpoint, covariates: chosen.covariates.join(',') } });
  return writeCsv(header, rows);
}

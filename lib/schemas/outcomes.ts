import { z } from 'zod';
import { blankAsUndefined, calendarDate } from '@/lib/registry/fields';
import { CASE_KINDS } from '@/lib/registry/case-kinds';
import { FACTOR_KEYS, FACTORS, isLevelCode, type FactorKey, type LevelFilters } from '@/lib/outcomes/compute';
import { FUNNEL_MEASURES } from '@/lib/outcomes/funnel';

/** The prefix of a level filter in the URL: `f.<factor>=<code>[,<code>…]`, e.g. `?f.group=molar&f.pai=4,5`. */
export const LEVEL_PREFIX = 'f.';
/** Factors with a filter of their own (the clinician: forced to a clinician's own cases) take no level filter. */
const NO_LEVEL_FILTER: readonly FactorKey[] = ['clinician'];
const MAX_CODES = 40;

/**
 * The level filters of a query: every `f.<factor>` key, its comma-separated codes checked against
 * the factor's vocabulary (or, for referrer and year, the shape of an id or a year). Errors are
 * reported under the URL's own key (`f.sealer`).
 */
export const LevelFilterQuery = z.record(z.string(), z.unknown()).transform((raw, ctx) => {
  const levels: { -readonly [K in FactorKey]?: string[] } = {};
  for (const [key, value] of Object.entries(raw)) {
    if (!key.startsWith(LEVEL_PREFIX)) continue;
    const factor = key.slice(LEVEL_PREFIX.length) as FactorKey;
    const problem = (message: string) => ctx.addIssue({ code: 'custom', path: [key], message });
    if (!(FACTOR_KEYS as string[]).includes(factor) || NO_LEVEL_FILTER.includes(factor)) {
      problem(`Unknown factor to filter on; use one of ${FACTOR_KEYS.filter((k) => !NO_LEVEL_FILTER.includes(k)).join(', ')}.`);
      continue;
    }
    if (typeof value !== 'string') {
      problem('List the levels separated by commas.');
      continue;
    }
    const codes = [...new Set(value.split(',').map((c) => c.trim()).filter((c) => c !== ''))];
    if (codes.length === 0) continue;
    if (codes.length > MAX_CODES) {
      problem(`At most ${MAX_CODES} levels.`);
      continue;
    }
    const bad = codes.find((c) => !isLevelCode(factor, c));
    if (bad !== undefined) {
      problem(`“${bad.slice(0, 40)}” is not a level of ${FACTORS[factor].label.toLowerCase()}.`);
      continue;
    }
    levels[factor] = codes;
  }
  return { levels: levels as LevelFilters };
});

/** The URL form of level filters (the inverse of LevelFilterQuery). */
export function levelParams(levels: LevelFilters | undefined): Record<string, string> {
  return Object.fromEntries(Object.entries(levels ?? {}).filter(([, v]) => v && v.length).map(([k, v]) => [`${LEVEL_PREFIX}${k}`, v!.join(',')]));
}

/** The outcomes area's filters, shared by every view and kept in the URL: period of completion, clinician, kind, levels of factors. */
const BaseFilterQuery = z
  .object({
    from: blankAsUndefined(calendarDate('the first day of the period')),
    to: blankAsUndefined(calendarDate('the last day of the period')),
    clinician: blankAsUndefined(z.uuid({ error: 'Unknown clinician.' })),
    kind: blankAsUndefined(z.enum(CASE_KINDS, { error: 'Unknown kind of treatment.' })),
  })
  .refine((f) => !f.from || !f.to || f.from <= f.to, { message: 'The first day comes after the last.', path: ['to'] });
export const OutcomeFilterQuery = z.intersection(BaseFilterQuery, LevelFilterQuery);
export type OutcomeFilterQuery = z.infer<typeof OutcomeFilterQuery>;

const Endpoint = z.enum(['healing', 'tooth'], { error: 'The endpoint is healing or tooth.' }).default('healing');
const CurveMethod = z.enum(['turnbull', 'km'], { error: 'The method is turnbull or km.' }).default('turnbull');

export const OutcomeFactorQuery = z.intersection(
  OutcomeFilterQuery,
  z.object({
    factor: z.enum(FACTOR_KEYS as [string, ...string[]], { error: `The factor is one of ${FACTOR_KEYS.join(', ')}.` }).default('kind'),
    /** the survival curves per level shown beside the table */
    endpoint: Endpoint,
    method: CurveMethod,
  }),
);

export const OutcomeCurvesQuery = z.intersection(
  OutcomeFilterQuery,
  z.object({
    endpoint: Endpoint,
    method: CurveMethod,
    factor: blankAsUndefined(z.enum(FACTOR_KEYS as [string, ...string[]], { error: `The factor is one of ${FACTOR_KEYS.join(', ')}.` })),
    /** the log-rank test stratified by this factor (issue 12, item 3) */
    stratum: blankAsUndefined(z.enum(FACTOR_KEYS as [string, ...string[]], { error: `The stratum is one of ${FACTOR_KEYS.join(', ')}.` })),
  }),
).refine((q) => !q.stratum || q.stratum !== q.factor, { message: 'Stratify by a factor other than the one the curves are split by.', path: ['stratum'] });

/** The clinician audit (funnel plot): which strict-success measure, crude or risk-adjusted. */
const FunnelChoice = z.object({
  measure: z.enum(FUNNEL_MEASURES, { error: 'The measure is m12 (strict success at 12 months) or latest (at the latest review a year or more after completion).' }).default('m12'),
  adjust: z.enum(['crude', 'adjusted'], { error: 'adjust is crude or adjusted.' }).default('adjusted'),
});
export const OutcomeFunnelQuery = z.intersection(OutcomeFilterQuery, FunnelChoice);

/** The printable audit report: the filters, the factor of its table and the funnel's choices. */
export const OutcomeReportQuery = z.intersection(
  OutcomeFilterQuery,
  FunnelChoice.extend({ factor: z.enum(FACTOR_KEYS as [string, ...string[]], { error: `The factor is one of ${FACTOR_KEYS.join(', ')}.` }).default('kind') }),
);
export type OutcomeReportQuery = z.output<typeof OutcomeReportQuery>;

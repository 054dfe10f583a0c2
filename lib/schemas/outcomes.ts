import { z } from 'zod';
import { blankAsUndefined, calendarDate } from '@/lib/registry/fields';
import { CASE_KINDS } from '@/lib/registry/case-kinds';
import { FACTOR_KEYS } from '@/lib/outcomes/compute';
import { FUNNEL_MEASURES } from '@/lib/outcomes/funnel';

/** The outcomes area's filters, shared by every view and kept in the URL: period of completion, clinician, kind. */
export const OutcomeFilterQuery = z
  .object({
    from: blankAsUndefined(calendarDate('the first day of the period')),
    to: blankAsUndefined(calendarDate('the last day of the period')),
    clinician: blankAsUndefined(z.uuid({ error: 'Unknown clinician.' })),
    kind: blankAsUndefined(z.enum(CASE_KINDS, { error: 'Unknown kind of treatment.' })),
  })
  .refine((f) => !f.from || !f.to || f.from <= f.to, { message: 'The first day comes after the last.', path: ['to'] });
export type OutcomeFilterQuery = z.infer<typeof OutcomeFilterQuery>;

export const OutcomeFactorQuery = z.intersection(
  OutcomeFilterQuery,
  z.object({ factor: z.enum(FACTOR_KEYS as [string, ...string[]], { error: `The factor is one of ${FACTOR_KEYS.join(', ')}.` }).default('kind') }),
);

export const OutcomeCurvesQuery = z.intersection(
  OutcomeFilterQuery,
  z.object({
    endpoint: z.enum(['healing', 'tooth'], { error: 'The endpoint is healing or tooth.' }).default('healing'),
    method: z.enum(['turnbull', 'km'], { error: 'The method is turnbull or km.' }).default('turnbull'),
    factor: blankAsUndefined(z.enum(FACTOR_KEYS as [string, ...string[]], { error: `The factor is one of ${FACTOR_KEYS.join(', ')}.` })),
  }),
);

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

import { z } from 'zod';
import { blankAsUndefined, calendarDate } from '@/lib/registry/fields';
import { CASE_KINDS } from '@/lib/registry/case-kinds';
import { FACTOR_KEYS } from '@/lib/outcomes/compute';

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
    /** the log-rank test stratified by this factor (issue 12, item 3) */
    stratum: blankAsUndefined(z.enum(FACTOR_KEYS as [string, ...string[]], { error: `The stratum is one of ${FACTOR_KEYS.join(', ')}.` })),
  }),
).refine((q) => !q.stratum || q.stratum !== q.factor, { message: 'Stratify by a factor other than the one the curves are split by.', path: ['stratum'] });

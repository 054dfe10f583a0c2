import { z } from 'zod';
import { COVARIATE_KEYS } from '@/lib/outcomes/model';
import { OutcomeFilterQuery } from './outcomes';

/**
 * The multivariable view's query (issue 12, item 4): the shared filters, the factors as a comma list
 * (`covariates=kind,lesion,pai`; blank → the default choice), how lesion size and baseline PAI enter,
 * and the Cox endpoint.
 */
export const OutcomeModelQuery = z.intersection(
  OutcomeFilterQuery,
  z.object({
    covariates: z.preprocess(
      (v) => (typeof v === 'string' ? (v.trim() === '' ? undefined : v.split(',').map((s) => s.trim()).filter(Boolean)) : v),
      z
        .array(z.enum(COVARIATE_KEYS as [string, ...string[]], { error: `Each factor is one of ${COVARIATE_KEYS.join(', ')}.` }), { error: 'Choose factors as a comma-separated list.' })
        .max(COVARIATE_KEYS.length, `At most ${COVARIATE_KEYS.length} factors.`)
        .optional(),
    ),
    lesionAs: z.enum(['bands', 'numeric'], { error: 'Lesion size enters as bands or numeric.' }).default('bands'),
    paiAs: z.enum(['numeric', 'levels'], { error: 'Baseline PAI enters as numeric or levels.' }).default('numeric'),
    endpoint: z.enum(['healing', 'tooth'], { error: 'The endpoint is healing or tooth.' }).default('healing'),
  }),
);
export type OutcomeModelQuery = z.infer<typeof OutcomeModelQuery>;

import { z } from 'zod';
import { RecallPolicySchema } from './recall-policy';

/** What an administrator may change of the practice's settings; every part optional in a patch. */
export const PracticeSettingsPatch = z
  .object({
    toothNotation: z.enum(['fdi', 'universal'], { error: 'Choose FDI or Universal.' }).optional(),
    recallPolicy: RecallPolicySchema.optional(),
    /** Days before which an unchanged lesion is "uncertain" rather than disease (ESE 2006: one year). */
    minObservationDays: z
      .number({ error: 'Enter the minimum observation time in whole days.' })
      .int('Enter whole days.')
      .min(0, 'The minimum observation time cannot be negative.')
      .max(1461, 'At most 1461 days (four years, when a lesion still present is disease).')
      .optional(),
  })
  .refine((v) => Object.values(v).some((x) => x !== undefined), { message: 'Change at least one setting.', path: ['toothNotation'] });
export type PracticeSettingsPatchInput = z.input<typeof PracticeSettingsPatch>;

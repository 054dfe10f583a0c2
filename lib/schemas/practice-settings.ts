import { z } from 'zod';
import { RecallPolicySchema } from './recall-policy';

/** What an administrator may change of the practice's settings; every part optional in a patch. */
export const PracticeSettingsPatch = z
  .object({
    toothNotation: z.enum(['fdi', 'universal'], { error: 'Choose FDI or Universal.' }).optional(),
    recallPolicy: RecallPolicySchema.optional(),
  })
  .refine((v) => Object.values(v).some((x) => x !== undefined), { message: 'Change at least one setting.', path: ['toothNotation'] });
export type PracticeSettingsPatchInput = z.input<typeof PracticeSettingsPatch>;

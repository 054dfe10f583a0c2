import { z } from 'zod';
import { RecallPolicySchema } from './recall-policy';

/** An optional text: empty clears it (null), otherwise trimmed and at most `max` characters. */
const clearable = (max: number, what: string) =>
  z.preprocess(
    (v) => (typeof v === 'string' && v.trim() === '' ? null : v),
    z.string({ error: `${what} is a text.` }).trim().max(max, `At most ${max} characters.`).nullable().optional(),
  );

/**
 * The practice's contact details, shown in every patient message and calendar file. Each may be
 * left empty (then messages say "contact the practice").
 */
export const PracticeContactPatch = z.object({
  address: clearable(300, 'The address'),
  phone: z.preprocess(
    (v) => (typeof v === 'string' && v.trim() === '' ? null : v),
    z
      .string({ error: 'The phone number is a text.' })
      .trim()
      .max(40, 'At most 40 characters.')
      .regex(/^\+?[0-9 ()./-]{5,}$/, 'A phone number uses digits, spaces and + ( ) - . / only, e.g. +44 20 7946 0000.')
      .nullable()
      .optional(),
  ),
  contactEmail: z.preprocess(
    (v) => (typeof v === 'string' && v.trim() === '' ? null : v),
    z.email({ error: 'Give an e-mail address such as desk@practice.example, or leave it empty.' }).max(254, 'At most 254 characters.').nullable().optional(),
  ),
});

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
    contact: PracticeContactPatch.optional(),
    /** Share (%) of follow-up films read a second time, blinded, besides every "disease" (issue 13). */
    secondReadingPercent: z
      .number({ error: 'Enter the second-reading share as a whole percentage.' })
      .int('Enter a whole percentage.')
      .min(0, 'The share cannot be below 0%.')
      .max(100, 'The share cannot be above 100%.')
      .optional(),
  })
  .refine((v) => Object.values(v).some((x) => x !== undefined), { message: 'Change at least one setting.', path: ['toothNotation'] });
export type PracticeSettingsPatchInput = z.input<typeof PracticeSettingsPatch>;

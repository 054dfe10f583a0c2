/**
 * Referrer: the dentist who referred the patient and receives the outcome reports later.
 * The e-mail is optional (some referrers are written to), but reports by e-mail need it.
 */
import { z } from 'zod';
import { Email, Id, blankAsUndefined } from '@/lib/registry/fields';

const ReferrerObject = z.object({
  id: Id,
  name: z
    .string({ error: 'Enter the referring dentist’s name.' })
    .trim()
    .min(1, 'Enter the referring dentist’s name.')
    .max(160, 'At most 160 characters.'),
  practiceName: blankAsUndefined(z.string().trim().max(160, 'At most 160 characters.')),
  email: blankAsUndefined(Email),
  archived: z.boolean().optional(),
});

export const ReferrerSchema = ReferrerObject;
export const ReferrerCreateSchema = ReferrerObject.omit({ id: true });
export const ReferrerUpdateSchema = ReferrerCreateSchema.partial();

export type Referrer = z.output<typeof ReferrerSchema>;
export type ReferrerCreate = z.output<typeof ReferrerCreateSchema>;
export type ReferrerUpdate = z.output<typeof ReferrerUpdateSchema>;

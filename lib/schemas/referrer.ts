/**
 * Referrer: the dentist who referred the patient and receives the outcome reports later.
 * The e-mail is optional (some referrers are written to), but reports by e-mail need it.
 */
import { z } from 'zod';
import { Email, Id, blankAsUndefined, text } from '@/lib/registry/fields';

const ReferrerObject = z.object({
  id: Id,
  name: text({ max: 160, required: 'Enter the referring dentist’s name.' }),
  practiceName: blankAsUndefined(text({ max: 160 })),
  email: blankAsUndefined(Email),
  archived: z.boolean().optional(),
});

export const ReferrerSchema = ReferrerObject;
export const ReferrerCreateSchema = ReferrerObject.omit({ id: true });
export const ReferrerUpdateSchema = ReferrerCreateSchema.partial();

export type Referrer = z.output<typeof ReferrerSchema>;
export type ReferrerCreate = z.output<typeof ReferrerCreateSchema>;
export type ReferrerUpdate = z.output<typeof ReferrerUpdateSchema>;

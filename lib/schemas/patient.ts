/**
 * Patient: the person whose treated teeth the registry follows. Shared by the patient form, the
 * API, the CSV import and jobs. The practice comes from the signed-in user, never from input;
 * who recorded the consents is set by the service from the actor.
 *
 * Consents: recall contact (yes/no, and the channel — e-mail, phone, post; 'none' when no) and
 * research use of anonymised data (yes/no), both with the date the answers were recorded.
 *
 * Variants: `PatientSchema` is a stored patient; `PatientCreateSchema` omits what the service sets;
 * `PatientUpdateSchema` is a partial of it. Cross-field rules run on each, on the fields present —
 * a service that patches a record re-checks the merged result with `PatientCreateSchema`.
 */
import { z } from 'zod';
import { Email, Id, blankAsUndefined, calendarDate, oneOf, text } from '@/lib/registry/fields';

export const SEXES = ['female', 'male', 'other', 'not_stated'] as const;
export type Sex = (typeof SEXES)[number];

export const RECALL_CHANNELS = ['email', 'phone', 'post', 'none'] as const;
export type RecallChannel = (typeof RECALL_CHANNELS)[number];

/** The practice's own patient number: letters, digits and . _ / - (no spaces at the ends). */
export const RegistryNumber = z
  .string({ error: 'Enter the registry number.' })
  .trim()
  .min(1, 'Enter the registry number.')
  .max(32, 'A registry number has at most 32 characters.')
  .regex(/^[A-Za-z0-9][A-Za-z0-9._/-]*$/, 'Use letters, digits and . _ / - in the registry number (start with a letter or digit).');

const personName = (what: string) => text({ max: 100, required: `Enter the ${what}.`, tooLong: `The ${what} has at most 100 characters.` });

/** Digits with the usual separators; 6–15 digits (ITU-T E.164 allows at most 15). */
export const Phone = z
  .string()
  .trim()
  .regex(/^\+?[0-9 ()./-]+$/, 'Use digits, spaces and + ( ) - . in the phone number.')
  .refine((v) => {
    const digits = v.replace(/\D/g, '').length;
    return digits >= 6 && digits <= 15;
  }, 'A phone number has 6 to 15 digits.');

export const PostalCode = z
  .string()
  .trim()
  .max(12, 'A postal code has at most 12 characters.')
  .regex(/^[A-Za-z0-9][A-Za-z0-9 -]*$/, 'Use letters, digits, spaces and - in the postal code.');

const PatientObject = z.object({
  id: Id,
  registryNumber: RegistryNumber,
  givenName: personName('given name'),
  familyName: personName('family name'),
  dateOfBirth: calendarDate('the date of birth'),
  sex: oneOf(SEXES, 'the sex'),
  email: blankAsUndefined(Email),
  phone: blankAsUndefined(Phone),
  postalCode: blankAsUndefined(PostalCode),
  recallContact: z.boolean({ error: 'Say whether the patient agrees to be contacted for recalls.' }),
  recallChannel: oneOf(RECALL_CHANNELS, 'how to contact the patient for recalls'),
  researchUse: z.boolean({ error: 'Say whether the patient agrees to research use of anonymised data.' }),
  consentDate: calendarDate('the date the consents were recorded'),
  /** The user who recorded the consents; set by the service. */
  consentRecordedBy: Id.optional(),
  /** Archived patients leave the working lists; their data stays. No default here, so a patch never unarchives. */
  archived: z.boolean().optional(),
});

type PatientShape = Partial<z.output<typeof PatientObject>>;

/**
 * The one rule joining the two recall fields: without recall-contact consent the channel is
 * none. Whatever withdraws the consent outside the form (the patient's unsubscribe link) writes
 * what this returns, and a record stored before the rule held is read through it, so a later
 * edit of the patient is not refused for a channel nobody chose.
 */
export function recallConsent(recallContact: boolean, recallChannel: RecallChannel): { recallContact: boolean; recallChannel: RecallChannel } {
  return { recallContact, recallChannel: recallContact ? recallChannel : 'none' };
}

/**
 * Rules across fields. On a whole record a missing contact field counts as empty; on a patch
 * (`partial`) only the fields the patch carries are checked.
 */
const patientRules = (partial: boolean) => (p: PatientShape, ctx: z.RefinementCtx) => {
  const lacks = (key: 'email' | 'phone' | 'postalCode') => (partial ? key in p && !p[key] : !p[key]);
  if (p.recallContact === true && p.recallChannel === 'none') {
    ctx.addIssue({ code: 'custom', path: ['recallChannel'], message: 'Choose how to contact the patient (e-mail, phone or post).' });
  }
  if (p.recallContact === false && p.recallChannel !== undefined && p.recallChannel !== recallConsent(false, p.recallChannel).recallChannel) {
    ctx.addIssue({ code: 'custom', path: ['recallChannel'], message: 'The patient does not agree to recall contact: the channel must be none.' });
  }
  if (p.recallContact) {
    if (p.recallChannel === 'email' && lacks('email')) {
      ctx.addIssue({ code: 'custom', path: ['email'], message: 'Recalls by e-mail need an e-mail address.' });
    }
    if (p.recallChannel === 'phone' && lacks('phone')) {
      ctx.addIssue({ code: 'custom', path: ['phone'], message: 'Recalls by phone need a phone number.' });
    }
    if (p.recallChannel === 'post' && lacks('postalCode')) {
      ctx.addIssue({ code: 'custom', path: ['postalCode'], message: 'Recalls by post need a postal code.' });
    }
  }
  if (p.dateOfBirth && p.consentDate && p.consentDate < p.dateOfBirth) {
    ctx.addIssue({ code: 'custom', path: ['consentDate'], message: 'The consent date is before the date of birth.' });
  }
};

/** A stored patient. */
export const PatientSchema = PatientObject.superRefine(patientRules(false));
/** New patient from a form, the API or the CSV import. */
export const PatientCreateSchema = PatientObject.omit({ id: true, consentRecordedBy: true }).superRefine(patientRules(false));
/** A change to some fields of a patient. */
export const PatientUpdateSchema = PatientObject.omit({ id: true, consentRecordedBy: true }).partial().superRefine(patientRules(true));

export type Patient = z.output<typeof PatientSchema>;
export type PatientCreate = z.output<typeof PatientCreateSchema>;
export type PatientCreateInput = z.input<typeof PatientCreateSchema>;
export type PatientUpdate = z.output<typeof PatientUpdateSchema>;

import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { RECALL_CHANNELS, SEXES } from '../lib/schemas/patient';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/**
 * A person whose treated teeth the registry follows, in one practice. The registry number is
 * the practice's own and unique within it. Archiving takes the patient out of the working
 * lists; nothing is deleted.
 *
 * Search (patients list, case list "patient or registry number"): one trigram GIN index
 * (pg_trgm, created by the migration) on lower(registry number + given + family name), so
 * `ILIKE '%word%'` per typed word is an index scan whatever the word's position; the unique
 * (practice, registry_number) btree answers exact look-ups (import, de-duplication).
 */
export const PatientSchema = defineEntity({
  name: 'Patient',
  tableName: 'patient',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    registryNumber: p.string().length(32),
    givenName: p.string().length(100),
    familyName: p.string().length(100),
    /** Calendar date 'YYYY-MM-DD'. */
    dateOfBirth: p.date(),
    sex: p.enum([...SEXES]),
    email: p.string().length(254).nullable(),
    phone: p.string().length(32).nullable(),
    postalCode: p.string().length(12).nullable(),
    /** Consent to be contacted for recalls, and how. */
    recallContact: p.boolean(),
    recallChannel: p.enum([...RECALL_CHANNELS]),
    /** Consent to research use of anonymised data. */
    researchUse: p.boolean(),
    /** When the consent answers were recorded, and by whom. */
    consentDate: p.date(),
    consentRecordedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    archivedAt: p.datetime().nullable(),
    createdAt: p.datetime().onCreate(() => new Date()),
    updatedAt: p.datetime().onCreate(() => new Date()).onUpdate(() => new Date()),
  },
  uniques: [{ name: 'patient_practice_registry_number_unique', properties: ['practice', 'registryNumber'] }],
  indexes: [
    { name: 'patient_practice_family_name_index', properties: ['practice', 'familyName', 'givenName'] },
    {
      name: 'patient_search_trgm_index',
      expression:
        `create index "patient_search_trgm_index" on "patient" using gin ` +
        `((lower(("registry_number")::text || ' ' || ("given_name")::text || ' ' || ("family_name")::text)) gin_trgm_ops)`,
    },
    // The recall desk's "to call" queue (lib/services/recall-desk.ts): patients who agreed to recall
    // contact but not by e-mail; its predicate is the queue's condition on the patient, verbatim.
    {
      name: 'patient_phone_recall_index',
      expression: `create index "patient_phone_recall_index" on "patient" ("id") where "recall_contact" and not ("recall_channel" = 'email' and "email" is not null and "email" <> '')`,
    },
  ],
});

export type Patient = InferEntity<typeof PatientSchema>;

/**
 * The SQL expression the trigram index covers, for a query that calls the patient table `alias`;
 * queries must use it verbatim (the planner matches the expression) to use the index.
 */
export function patientSearchSql(alias: string): string {
  const c = (name: string) => `(${alias}."${name}")::text`;
  return `lower(${c('registry_number')} || ' ' || ${c('given_name')} || ' ' || ${c('family_name')})`;
}

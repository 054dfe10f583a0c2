import { defineEntity, p, type InferEntity } from '@mikro-orm/core';

/**
 * The case list's version per practice (issue 15, load): bumped by database triggers on every
 * statement that changes the practice's cases, recall visits or patients
 * (migrations/Migration20261204120000.ts), read by lib/services/cases-list.ts before it trusts a
 * total it kept. Only the triggers write it; no foreign key (see the migration).
 */
export const CaseListVersionSchema = defineEntity({
  name: 'CaseListVersion',
  tableName: 'case_list_version',
  properties: {
    practiceId: p.uuid().primary(),
    version: p.bigint().default(1),
  },
});

export type CaseListVersion = InferEntity<typeof CaseListVersionSchema>;

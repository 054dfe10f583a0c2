import { defineEntity, p, type InferEntity } from '@mikro-orm/core';

/**
 * The outcomes area's data version per practice (issue 12, performance): bumped by database
 * triggers on every statement that changes the practice's cases, reviews, recall visits or
 * patients (migrations/Migration20261202180000.ts), read by lib/services/outcomes-cache.ts before
 * it trusts its cached rows. Only the triggers write it; no foreign key (see the migration).
 */
export const OutcomesDataVersionSchema = defineEntity({
  name: 'OutcomesDataVersion',
  tableName: 'outcomes_data_version',
  properties: {
    practiceId: p.uuid().primary(),
    version: p.bigint().default(1),
  },
});

export type OutcomesDataVersion = InferEntity<typeof OutcomesDataVersionSchema>;

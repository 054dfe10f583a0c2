import { defineEntity, p, type InferEntity } from '@mikro-orm/core';

/**
 * What changed at each outcomes data version (issue 12, speed): one row per changed case (or
 * patient) per version, written only by the triggers' function outcomes_data_bump()
 * (migrations/Migration20261202230000.ts); a row with neither means "everything may have
 * changed". Read by lib/services/outcomes-cache.ts to refresh its cached rows incrementally.
 */
export const OutcomesDataChangeSchema = defineEntity({
  name: 'OutcomesDataChange',
  tableName: 'outcomes_data_change',
  properties: {
    id: p.bigint().primary().autoincrement(),
    practiceId: p.uuid(),
    version: p.bigint(),
    caseId: p.uuid().nullable(),
    patientId: p.uuid().nullable(),
  },
  indexes: [{ name: 'outcomes_data_change_practice_version_index', properties: ['practiceId', 'version'] }],
});

export type OutcomesDataChange = InferEntity<typeof OutcomesDataChangeSchema>;

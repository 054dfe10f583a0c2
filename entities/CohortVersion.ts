import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import type { CohortFilters } from '../lib/schemas/cohort';
import { CohortSchema } from './Cohort';
import { UserSchema } from './User';

/**
 * One saved definition of a cohort: its filters (the outcomes area's, clinicians as the cohort's
 * codes), the variables chosen for the archive and k. Numbered 1, 2… per cohort and IMMUTABLE once
 * saved: a trigger (Migration20261202220000) refuses any UPDATE, so an export of version n can be
 * made again from the same definition. A change is a new version.
 */
export const CohortVersionSchema = defineEntity({
  name: 'CohortVersion',
  tableName: 'cohort_version',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    cohort: p.manyToOne(CohortSchema).ref().deleteRule('cascade'),
    number: p.integer(),
    filters: p.json<CohortFilters>(),
    variables: p.json<string[]>(),
    k: p.integer(),
    createdBy: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    createdAt: p.datetime().onCreate(() => new Date()),
  },
  uniques: [{ name: 'cohort_version_cohort_number_unique', properties: ['cohort', 'number'] }],
});

export type CohortVersion = InferEntity<typeof CohortVersionSchema>;

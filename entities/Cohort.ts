import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/**
 * A researcher's cohort (issue 14): a name in a practice, owned by the researcher who made it. Its
 * definition lives in numbered, immutable versions (CohortVersion); every export is of one version.
 */
export const CohortSchema = defineEntity({
  name: 'Cohort',
  tableName: 'cohort',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    name: p.string().length(120),
    owner: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    createdAt: p.datetime().onCreate(() => new Date()),
    archivedAt: p.datetime().nullable().default(null),
  },
  indexes: [{ name: 'cohort_practice_index', properties: ['practice', 'createdAt'] }],
});

export type Cohort = InferEntity<typeof CohortSchema>;

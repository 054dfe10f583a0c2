import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { PracticeSchema } from './Practice';

/** A referring dentist, who receives the outcome reports of the cases they referred. */
export const ReferrerSchema = defineEntity({
  name: 'Referrer',
  tableName: 'referrer',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    name: p.string().length(160),
    practiceName: p.string().length(160).nullable(),
    email: p.string().length(254).nullable(),
    archivedAt: p.datetime().nullable(),
    createdAt: p.datetime().onCreate(() => new Date()),
  },
  indexes: [{ name: 'referrer_practice_name_index', properties: ['practice', 'name'] }],
});

export type Referrer = InferEntity<typeof ReferrerSchema>;

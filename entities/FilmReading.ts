import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { READING_KINDS } from '../lib/reading/rules';
import type { ReviewSign } from '../lib/schemas/review';
import { FilmSchema } from './Film';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/**
 * One reading of a film (issue 13): the first reading, a blinded second reading, an adjudication
 * (a third reader, or the lead's consensus entry: `consensus`), or a calibration-exercise reading
 * of a reference film. Every reading is kept (never updated or deleted); the rules of which one
 * counts are in lib/reading/rules.ts. `signs` are the clinical signs the first reader records
 * (blinded readings have none).
 */
export const FilmReadingSchema = defineEntity({
  name: 'FilmReading',
  tableName: 'film_reading',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    film: p.manyToOne(FilmSchema).ref().deleteRule('cascade'),
    reader: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    kind: p.enum([...READING_KINDS]),
    pai: p.smallint(),
    signs: p.json<Partial<Record<ReviewSign, boolean>>>().default('{}'),
    consensus: p.boolean().default(false),
    createdAt: p.datetime().onCreate(() => new Date()),
  },
  checks: [{ name: 'film_reading_pai_check', expression: '(pai >= 1) AND (pai <= 5)' }],
  indexes: [
    { name: 'film_reading_film_index', properties: ['film', 'createdAt'] },
    { name: 'film_reading_practice_kind_index', properties: ['practice', 'kind'] },
  ],
});

export type FilmReading = InferEntity<typeof FilmReadingSchema>;

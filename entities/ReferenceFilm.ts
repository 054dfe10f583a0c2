import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { FilmSchema } from './Film';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/**
 * A film of the practice's reference set for the calibration exercise (issue 13), with its
 * reference PAI set by the lead. One row per film; removing it from the set deletes the row
 * (the exercise readings stay in film_reading).
 */
export const ReferenceFilmSchema = defineEntity({
  name: 'ReferenceFilm',
  tableName: 'reference_film',
  properties: {
    film: p.oneToOne(FilmSchema).primary().ref().owner().deleteRule('cascade'),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    pai: p.smallint(),
    setBy: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    setAt: p.datetime().onCreate(() => new Date()).onUpdate(() => new Date()),
  },
  checks: [{ name: 'reference_film_pai_check', expression: '(pai >= 1) AND (pai <= 5)' }],
  indexes: [{ name: 'reference_film_practice_index', properties: ['practice'] }],
});

export type ReferenceFilm = InferEntity<typeof ReferenceFilmSchema>;

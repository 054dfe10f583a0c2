import { z } from 'zod';
import { READING_KINDS } from '@/lib/reading/rules';
import { REVIEW_SIGNS } from './review';

const Pai = z
  .number({ error: 'Give the periapical index as a whole number from 1 to 5.' })
  .int('Give the periapical index as a whole number from 1 to 5.')
  .min(1, 'The periapical index runs from 1 to 5.')
  .max(5, 'The periapical index runs from 1 to 5.');

/** The clinical signs a first reader records (present: true); unknown keys refused. */
export const ReadingSigns = z
  .partialRecord(z.enum(REVIEW_SIGNS, { error: `A sign is one of ${REVIEW_SIGNS.join(', ')}.` }), z.boolean({ error: 'A sign is true or false.' }))
  .default({});

/** POST /api/reading/films/:id/readings */
export const ReadingInput = z.object({
  kind: z.enum(READING_KINDS, { error: `Choose the kind of reading: ${READING_KINDS.join(', ')}.` }),
  pai: Pai,
  signs: ReadingSigns,
});
export type ReadingInputValues = z.input<typeof ReadingInput>;

/** PUT /api/reading/reference/:id — a reference score, or null to take the film out of the set. */
export const ReferenceInput = z.object({ pai: Pai.nullable() });

/** GET /api/reading/queue?scope=mine|practice */
export const QueueQuery = z.object({
  scope: z.enum(['mine', 'practice'], { error: 'scope is mine or practice.' }).default('mine'),
});

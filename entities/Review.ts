import { defineEntity, p, type EntitySchema, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { EXTRACTION_REASONS, TOOTH_STATUSES, type ReviewSign } from '../lib/schemas/review';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { TreatmentCaseSchema } from './TreatmentCase';
import { UserSchema } from './User';

export const REVIEW_OUTCOMES = ['healed', 'healing', 'uncertain', 'disease', 'tooth-extracted', 'retreated', 'apical-surgery'] as const;

/**
 * One follow-up assessment of a case: at an attended recall visit, or unplanned (no visit).
 * The findings are as entered; `outcome`, `successStrict`, `successLenient` and
 * `outcomeReasons` are computed by lib/scoring `assessReview` from the findings, the case's
 * baseline (its PAI before treatment), `daysSinceCompletion` and the practice's minimum observation
 * time — never typed by hand (lib/scoring `assessRecordedReview`).
 *
 * `eventDate`: the day the tooth was extracted, retreated or operated, when that is known and is not
 * the review date (an event elsewhere, reported at a later review); null otherwise. `extractionReason`:
 * why an extracted tooth was extracted (null for other statuses).
 */
export const ReviewSchema = defineEntity({
  name: 'Review',
  tableName: 'review',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    case: p.manyToOne(TreatmentCaseSchema).ref().deleteRule('cascade'),
    visit: p.manyToOne(RecallVisitSchema).ref().nullable().deleteRule('set null'),
    assessor: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    reviewDate: p.date(),
    /** Days from the case's completion date to the review date. */
    daysSinceCompletion: p.integer(),
    toothStatus: p.enum([...TOOTH_STATUSES]),
    /** Null when the tooth was extracted (nothing to score). */
    paiScore: p.smallint().nullable(),
    lesionDiameterMm: p.decimal('number').precision(4).scale(1).nullable(),
    /** Clinical signs and symptoms recorded yes/no; an absent key was not recorded. */
    signs: p.json<Partial<Record<ReviewSign, boolean>>>().default('{}'),
    otherFindings: p.string().length(500).nullable(),
    eventDate: p.date().nullable(),
    extractionReason: p.enum([...EXTRACTION_REASONS]).nullable(),
    outcome: p.enum([...REVIEW_OUTCOMES]),
    successStrict: p.boolean(),
    successLenient: p.boolean(),
    outcomeReasons: p.array<string>().default([]),
    /** A correction replaced this version (kept, shown as superseded; outcomes read only current versions). */
    // By name: a schema cannot name itself while it is being defined.
    supersededBy: p.manyToOne('Review' as unknown as EntitySchema<{ id: string }>).ref().nullable().unique().deleteRule('set null'),
    supersededAt: p.datetime().nullable(),
    /** On a correction: why the earlier version was corrected, and who corrected it. */
    correctionReason: p.string().length(500).nullable(),
    correctedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    createdAt: p.datetime().onCreate(() => new Date()),
    updatedAt: p.datetime().onCreate(() => new Date()).onUpdate(() => new Date()),
  },
  indexes: [
    { name: 'review_case_date_index', properties: ['case', 'reviewDate'] },
    { name: 'review_practice_outcome_index', properties: ['practice', 'outcome'] },
    { name: 'review_visit_index', properties: ['visit'] },
  ],
});

export type Review = InferEntity<typeof ReviewSchema>;

import { defineEntity, p, type EntitySchema, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { NEXT_STEPS } from '../lib/outcomes/worklist';
import { PracticeSchema } from './Practice';
import { RecallVisitSchema } from './RecallVisit';
import { TreatmentCaseSchema } from './TreatmentCase';
import { UserSchema } from './User';

/**
 * The next step a clinician recorded for a case on the non-healing worklist (issue 12; the rule
 * is lib/outcomes/worklist.ts): watch and re-review, retreat, apical surgery, extract or refer,
 * with its date (re-review date or planned date) and a short note.
 *
 * History is kept: a change is a new row that `replaces` the case's current one, never an
 * update. The case's current step is the row nothing replaces; a unique `replaces` and a partial
 * unique index on the case's first row (`replaces` null) keep one chain per case, even when two
 * requests race. `linkedCase` is the later case of the tooth that a retreatment or surgery became
 * (created from the decision, or the one already there); `visit` the recall visit a re-review
 * added. `reviewDate` is the case's latest review when the step was recorded.
 */
export const CaseDecisionSchema = defineEntity({
  name: 'CaseDecision',
  tableName: 'case_decision',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    case: p.manyToOne(TreatmentCaseSchema).ref().deleteRule('cascade'),
    step: p.enum([...NEXT_STEPS]),
    date: p.date(),
    note: p.string().length(300).nullable(),
    reviewDate: p.date(),
    linkedCase: p.manyToOne(TreatmentCaseSchema).ref().nullable().deleteRule('set null'),
    visit: p.manyToOne(RecallVisitSchema).ref().nullable().deleteRule('set null'),
    replaces: p.manyToOne('CaseDecision' as unknown as EntitySchema<{ id: string }>).ref().nullable().unique().deleteRule('set null'),
    decidedBy: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    createdAt: p.datetime().onCreate(() => new Date()),
  },
  indexes: [{ name: 'case_decision_case_index', properties: ['case', 'createdAt'] }],
  uniques: [
    // one first step per case: a later step replaces an earlier one (replaces), so two first steps would be two histories
    { name: 'case_decision_case_first_unique', expression: 'create unique index "case_decision_case_first_unique" on "case_decision" ("case_id") where "replaces_id" is null' },
  ],
});

export type CaseDecision = InferEntity<typeof CaseDecisionSchema>;

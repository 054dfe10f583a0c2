import { defineEntity, p, type EntityClass, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import {
  APICAL_DIAGNOSES,
  CAPPING_MATERIALS,
  CASE_KINDS,
  COMPLETION_RESTORATIONS,
  DEFINITIVE_RESTORATIONS,
  FILL_DENSITIES,
  FILLING_TECHNIQUES,
  PULP_THERAPY_TYPES,
  PULPAL_DIAGNOSES,
  ROOT_END_FILLINGS,
  SEALER_CLASSES,
  type Canal,
} from '../lib/schemas/case';
import { VISIT_STATUSES } from '../lib/recall/status';
import { TOOTH_GROUPS } from '../lib/teeth';
import { PatientSchema } from './Patient';
import { PracticeSchema } from './Practice';
import { ReferrerSchema } from './Referrer';
import { UserSchema } from './User';

/**
 * The entity's own name, for its link to the tooth's earlier case: a schema cannot name itself
 * while it is being defined, and MikroORM resolves a target given by name.
 */
const SELF = 'TreatmentCase' as unknown as EntityClass<{ id: string }>;

/**
 * One tooth treated once (lib/schemas/case.ts has the vocabulary, units and ranges).
 *
 * Canals are a jsonb array ({ name, workingLengthMm, apicalSize, fillToApexMm }), not a child
 * table: a case has at most six, they are always read and written with their case, they have
 * no identity or lifecycle of their own and nothing references one. A child table would triple
 * the rows and the inserts of a 10,000-case import for no query that needs it. What the lists
 * filter and sort on is derived from them and stored in columns: `canalCount` and
 * `fillLengthClass` (lib/scoring's class of each canal, the case taking its worst: beyond if
 * any canal is beyond the apex, else short if any is more than 2 mm short, else within; null
 * while no canal has a measured fill length).
 *
 * The tooth is stored in FDI two-digit notation (ISO 3950); `toothGroup` and `toothArch` are
 * derived from it (lib/teeth) and stored so the case list can filter on them with an index.
 *
 * `nextVisitDate` / `nextVisitStatus` (due date and status of the earliest open visit — planned,
 * invited, confirmed) and `visitStatuses` (the distinct statuses of all its visits) summarise the
 * case's recall visits, so the list can sort by the next recall and filter by visit status without
 * a per-row subquery over 100,000 cases. A database trigger on recall_visit keeps them (migration
 * Migration20261201230242, function lamina_case_visit_summary): whoever changes visits — services,
 * the recall desk's jobs, SQL — cannot leave them stale. The services also set them on the entity
 * they hold (lib/services/visits.ts setVisitSummary) so an answer built from it is current.
 */
export const TreatmentCaseSchema = defineEntity({
  name: 'TreatmentCase',
  tableName: 'treatment_case',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    patient: p.manyToOne(PatientSchema).ref().deleteRule('cascade'),
    /** FDI two-digit tooth number (ISO 3950). */
    tooth: p.smallint(),
    toothGroup: p.enum([...TOOTH_GROUPS]),
    toothArch: p.enum(['upper', 'lower'] as const),
    kind: p.enum([...CASE_KINDS]),
    /** The clinician who treated the tooth. */
    operator: p.manyToOne(UserSchema).ref().deleteRule('restrict'),
    referrer: p.manyToOne(ReferrerSchema).ref().nullable().deleteRule('set null'),
    startDate: p.date(),
    /** Canal filling (or the day the procedure was completed); null while in progress. */
    completionDate: p.date().nullable(),

    // before treatment
    pulpalDiagnosis: p.enum([...PULPAL_DIAGNOSES]),
    apicalDiagnosis: p.enum([...APICAL_DIAGNOSES]),
    /** Periapical index before treatment, 1–5 (Ørstavik 1986). */
    paiScore: p.smallint(),
    /** Largest lesion diameter before treatment, mm (0 = none), 0.1 mm precision. */
    lesionDiameterMm: p.decimal('number').precision(4).scale(1),
    preopSymptoms: p.array<string>().default([]),
    sinusTract: p.boolean().nullable(),
    /** Deepest probing depth, whole mm. */
    probingDepthMm: p.smallint().nullable(),

    // treatment
    canals: p.json<Canal[]>().default('[]'),
    canalCount: p.smallint().default(0),
    fillingTechnique: p.enum([...FILLING_TECHNIQUES]).nullable(),
    sealerClass: p.enum([...SEALER_CLASSES]).nullable(),
    apicalPatency: p.boolean().nullable(),
    complications: p.array<string>().default([]),
    rootEndFilling: p.enum([...ROOT_END_FILLINGS]).nullable(),
    pulpTherapyType: p.enum([...PULP_THERAPY_TYPES]).nullable(),
    cappingMaterial: p.enum([...CAPPING_MATERIALS]).nullable(),

    // after treatment
    fillDensity: p.enum([...FILL_DENSITIES]).nullable(),
    fillLengthClass: p.enum(['within', 'short', 'beyond'] as const).nullable(),
    coronalRestoration: p.enum([...COMPLETION_RESTORATIONS]).nullable(),
    definitiveRestoration: p.enum([...DEFINITIVE_RESTORATIONS]).nullable(),
    definitiveRestorationDate: p.date().nullable(),

    // recall summary (see above), kept by a database trigger on recall_visit
    nextVisitDate: p.date().nullable(),
    nextVisitStatus: p.enum([...VISIT_STATUSES]).nullable(),
    /** The distinct statuses of the case's visits, for the list's "visit status" filter. */
    visitStatuses: p.array<string>().default([]),

    /**
     * The same tooth's earlier case, when this one retreats or operates on it: the tooth stays
     * followed for tooth loss across the chain (lib/scoring caseObservations).
     */
    previousCase: p.manyToOne(SELF).ref().nullable().deleteRule('set null'),

    /** How the case came in: entered on a form or imported from a CSV file. */
    source: p.enum(['form', 'import', 'demo'] as const).default('form'),
    createdBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    archivedAt: p.datetime().nullable(),
    createdAt: p.datetime().onCreate(() => new Date()),
    updatedAt: p.datetime().onCreate(() => new Date()).onUpdate(() => new Date()),
  },
  indexes: [
    // The case list (lib/services/cases.ts): partial indexes over the working list (archived cases
    // left out), one per filter, each ending in the completion date of the default order; the
    // count of an unfiltered list, or one filtered by visit status, is an index-only scan of the
    // first (it includes the visit statuses). Chosen with EXPLAIN on
    // 100,000 cases (scripts/bench/registry.ts).
    workingListIndex('treatment_case_practice_completion_index', ['practice_id', 'completion_date', 'id'], ['visit_statuses']),
    workingListIndex('treatment_case_practice_operator_index', ['practice_id', 'operator_id', 'completion_date']),
    // The kind index also carries the other case columns the list filters on, so a count of "this
    // kind, and that tooth group, arch, fill length or clinician" is an index-only scan of the kind's
    // range instead of a visit to each of its cases' table pages (issue 15, load: 26 ms warm and
    // 76–400 ms cold against 2–13 ms, "retreatments of molars" at 100,000 cases).
    workingListIndex('treatment_case_practice_kind_index', ['practice_id', 'kind', 'completion_date'], ['tooth_group', 'tooth_arch', 'fill_length_class', 'operator_id']),
    workingListIndex('treatment_case_practice_tooth_group_index', ['practice_id', 'tooth_group', 'completion_date']),
    workingListIndex('treatment_case_practice_fill_length_index', ['practice_id', 'fill_length_class', 'completion_date']),
    workingListIndex('treatment_case_practice_next_visit_index', ['practice_id', 'next_visit_date', 'id']),
    // The recall desk's counts and queue rows (lib/services/recall-desk.ts) join their visits to the
    // live cases: an index-only scan of this one instead of the whole table (issue 15, load).
    workingListIndex('treatment_case_live_index', ['id'], ['patient_id', 'operator_id', 'archived_at']),
    { name: 'treatment_case_patient_index', properties: ['patient'] },
    { name: 'treatment_case_previous_case_index', properties: ['previousCase'] },
  ],
});

export type TreatmentCase = InferEntity<typeof TreatmentCaseSchema>;

function workingListIndex(name: string, columns: string[], include: string[] = []) {
  const q = (cs: string[]) => cs.map((c) => `"${c}"`).join(', ');
  const extra = include.length ? ` include (${q(include)})` : '';
  return { name, expression: `create index "${name}" on "treatment_case" (${q(columns)})${extra} where "archived_at" is null` };
}

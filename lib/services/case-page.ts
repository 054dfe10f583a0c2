import 'server-only';
/** One case as its page shows it: details, timeline, visits, reviews and the tooth's linked cases. */
import type { EntityManager } from '@mikro-orm/postgresql';
import type { TreatmentCase } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { CASE_KIND_LABELS, fieldsFor, type Canal, type CaseCreate, type CaseFieldsForKind, type CaseKind } from '@/lib/schemas/case';
import type { VisitStatus } from '@/lib/recall';
import { FILL_LENGTH_LABELS, OUTCOME_LABELS, SCORING_CAUTION, fillLengthClass, type FillLengthClass, type ReviewOutcome } from '@/lib/scoring';
import { formatTooth, toothInfo, type ToothGroup, type ToothNotation } from '@/lib/teeth';
import { auditRead } from './audit';
import { NotFoundError } from './errors';
import { assertId, displayName, knexOf, practiceSettings, todayIn, type PracticeSettings, type Timestamp } from './registry-common';
import { referrerView, type ReferrerView } from './referrers';
import { caseReviews, type ReviewView } from './reviews';
import { readVisitFields, visitViews, type VisitView } from './visits';
import { caseValues, type CaseFields } from './case-columns';

// --- one case -------------------------------------------------------------------------------------

export interface TimelineEntry {
  date: string;
  type: 'treatment-started' | 'treatment-completed' | 'definitive-restoration' | 'visit' | 'review';
  title: string;
  /** The visit or review it refers to. */
  refId?: string;
  visitStatus?: VisitStatus;
  outcome?: ReviewOutcome;
  /** A review's findings (signs, other findings), or why it is superseded. */
  detail?: string;
  /** An earlier version of a review, replaced by a correction. */
  superseded?: boolean;
}

export interface CaseDetail {
  id: string;
  patient: { id: string; registryNumber: string; givenName: string; familyName: string; name: string; dateOfBirth: string; archived: boolean };
  tooth: string;
  toothFdi: number;
  toothName: string;
  toothGroup: ToothGroup;
  toothArch: 'upper' | 'lower';
  notation: ToothNotation;
  kind: CaseKind;
  kindLabel: string;
  operator: { id: string; name: string | null; email: string };
  referrer: ReferrerView | null;
  startDate: string;
  completionDate: string | null;
  stage: 'in_progress' | 'completed';
  /** The case as the form edits it (CaseCreateSchema input; FDI tooth, ids). */
  values: CaseCreate;
  /** Which sections and fields apply to the kind. */
  fields: CaseFieldsForKind;
  canals: (Canal & { fillLengthClass: FillLengthClass | null })[];
  fillLengthClass: FillLengthClass | null;
  fillLengthLabel: string | null;
  visits: VisitView[];
  reviews: ReviewView[];
  currentOutcome: ReviewOutcome | null;
  currentOutcomeLabel: string | null;
  /** The outcome of the latest current review: with "disease" the case page says no next step is recorded. */
  latestOutcome: ReviewOutcome | null;
  /** Show beside computed outcomes and classes. */
  caution: string;
  timeline: TimelineEntry[];
  source: 'form' | 'import' | 'demo';
  /** The tooth's earlier case this one retreats or operates on, and the cases that follow this one. */
  previousCase: LinkedCase | null;
  laterCases: LinkedCase[];
  archived: boolean;
  createdAt: string;
  updatedAt: string;
}

/** Another case of the same tooth, for the links on the case page. */
export interface LinkedCase {
  id: string;
  kindLabel: string;
  startDate: string;
  completionDate: string | null;
  archived: boolean;
}

/** One case with its timeline: treatment, visits, reviews. Audited as a read. */
export async function getCase(em: EntityManager, actor: Actor, id: string): Promise<CaseDetail> {
  assertCan(actor, 'patient.read');
  const [read, settings] = await Promise.all([readCase(em, actor.practiceId, assertId(id, 'case')), practiceSettings(em, actor.practiceId)]);
  if (!read) throw new NotFoundError('No such case.');
  // The case is the actor's to see (found in their practice): its read is recorded beside the reading.
  const [detail] = await Promise.all([
    caseDetail(em, read, settings),
    auditRead(em, actor, { action: 'case.read', entityType: 'case', entityId: read.c.id, detail: { patientId: read.patient.id } }),
  ]);
  return detail;
}

/** A case as it is stored now, as its page shows it: the answer of the commands that change one (not audited as a read). */
export async function storedCaseDetail(em: EntityManager, practiceId: string, id: string, settings: PracticeSettings): Promise<CaseDetail> {
  const read = await readCase(em, practiceId, id);
  if (!read) throw new NotFoundError('No such case.');
  return caseDetail(em, read, settings);
}

/** A case with its patient, clinician and referrer, as its page reads them. */
export interface CaseRead {
  c: CaseFields;
  patient: { id: string; registryNumber: string; givenName: string; familyName: string; dateOfBirth: string; archivedAt: Date | null };
  operator: { id: string; name: string | null; email: string };
  referrer: ReferrerFields | null;
}

type ReferrerFields = Parameters<typeof referrerView>[0];

/**
 * A case of the practice with its patient, clinician and referrer: one plain read, no entities (the
 * case page, the load's busiest request; the ORM's query building and hydration cost more than the
 * statement). Null when there is no such case in the practice.
 */
export async function readCase(em: EntityManager, practiceId: string, id: string): Promise<CaseRead | null> {
  const knex = knexOf(em);
  const row = (await knex('treatment_case as c')
    .join('patient as p', 'p.id', 'c.patient_id')
    .join('app_user as u', 'u.id', 'c.operator_id')
    .leftJoin('referrer as r', 'r.id', 'c.referrer_id')
    .where('c.id', id)
    .andWhere('c.practice_id', practiceId)
    .first(
      ...CASE_COLUMNS.map((col) => `c.${col}`),
      knex.raw('c.start_date::text as start_date'),
      knex.raw('c.completion_date::text as completion_date'),
      knex.raw('c.definitive_restoration_date::text as definitive_restoration_date'),
      'p.registry_number as patient_registry_number',
      'p.given_name as patient_given_name',
      'p.family_name as patient_family_name',
      knex.raw('p.date_of_birth::text as patient_date_of_birth'),
      'p.archived_at as patient_archived_at',
      'u.name as operator_name',
      'u.email as operator_email',
      'r.name as referrer_name',
      'r.practice_name as referrer_practice_name',
      'r.email as referrer_email',
      'r.archived_at as referrer_archived_at',
    )) as CaseRow | undefined;
  if (!row) return null;
  const c: CaseFields = {
    id: row.id,
    practice: { id: row.practice_id },
    patient: { id: row.patient_id },
    operator: { id: row.operator_id },
    referrer: row.referrer_id ? { id: row.referrer_id } : null,
    previousCase: row.previous_case_id ? { id: row.previous_case_id } : null,
    tooth: row.tooth,
    toothGroup: row.tooth_group,
    toothArch: row.tooth_arch,
    kind: row.kind,
    startDate: row.start_date,
    completionDate: row.completion_date,
    pulpalDiagnosis: row.pulpal_diagnosis,
    apicalDiagnosis: row.apical_diagnosis,
    paiScore: row.pai_score,
    lesionDiameterMm: Number(row.lesion_diameter_mm),
    preopSymptoms: row.preop_symptoms,
    sinusTract: row.sinus_tract,
    probingDepthMm: row.probing_depth_mm,
    canals: row.canals,
    fillingTechnique: row.filling_technique,
    sealerClass: row.sealer_class,
    apicalPatency: row.apical_patency,
    complications: row.complications,
    rootEndFilling: row.root_end_filling,
    pulpTherapyType: row.pulp_therapy_type,
    cappingMaterial: row.capping_material,
    fillDensity: row.fill_density,
    fillLengthClass: row.fill_length_class,
    coronalRestoration: row.coronal_restoration,
    definitiveRestoration: row.definitive_restoration,
    definitiveRestorationDate: row.definitive_restoration_date,
    source: row.source,
    archivedAt: dateOrNull(row.archived_at),
    createdAt: new Date(row.created_at),
    updatedAt: new Date(row.updated_at),
  };
  return {
    c,
    patient: {
      id: row.patient_id,
      registryNumber: row.patient_registry_number,
      givenName: row.patient_given_name,
      familyName: row.patient_family_name,
      dateOfBirth: row.patient_date_of_birth,
      archivedAt: dateOrNull(row.patient_archived_at),
    },
    operator: { id: row.operator_id, name: row.operator_name, email: row.operator_email },
    referrer: row.referrer_id
      ? { id: row.referrer_id, name: row.referrer_name!, practiceName: row.referrer_practice_name, email: row.referrer_email, archivedAt: dateOrNull(row.referrer_archived_at) }
      : null,
  };
}

/** treatment_case's columns the page reads as they are; its dates are read as text (above). */
const CASE_COLUMNS = [
  'id',
  'practice_id',
  'patient_id',
  'operator_id',
  'referrer_id',
  'previous_case_id',
  'tooth',
  'tooth_group',
  'tooth_arch',
  'kind',
  'pulpal_diagnosis',
  'apical_diagnosis',
  'pai_score',
  'lesion_diameter_mm',
  'preop_symptoms',
  'sinus_tract',
  'probing_depth_mm',
  'canals',
  'filling_technique',
  'sealer_class',
  'apical_patency',
  'complications',
  'root_end_filling',
  'pulp_therapy_type',
  'capping_material',
  'fill_density',
  'fill_length_class',
  'coronal_restoration',
  'definitive_restoration',
  'source',
  'archived_at',
  'created_at',
  'updated_at',
] as const;

const dateOrNull = (t: Timestamp | null): Date | null => (t === null ? null : new Date(t));

/** treatment_case's columns as the plain read gives them (dates as text), with the people's. */
type CaseRow = {
  id: string;
  practice_id: string;
  patient_id: string;
  operator_id: string;
  referrer_id: string | null;
  previous_case_id: string | null;
  tooth: number;
  tooth_group: TreatmentCase['toothGroup'];
  tooth_arch: TreatmentCase['toothArch'];
  kind: TreatmentCase['kind'];
  start_date: string;
  completion_date: string | null;
  pulpal_diagnosis: TreatmentCase['pulpalDiagnosis'];
  apical_diagnosis: TreatmentCase['apicalDiagnosis'];
  pai_score: number;
  lesion_diameter_mm: string;
  preop_symptoms: string[];
  sinus_tract: boolean | null;
  probing_depth_mm: number | null;
  canals: Canal[];
  filling_technique: TreatmentCase['fillingTechnique'];
  sealer_class: TreatmentCase['sealerClass'];
  apical_patency: boolean | null;
  complications: string[];
  root_end_filling: TreatmentCase['rootEndFilling'];
  pulp_therapy_type: TreatmentCase['pulpTherapyType'];
  capping_material: TreatmentCase['cappingMaterial'];
  fill_density: TreatmentCase['fillDensity'];
  fill_length_class: TreatmentCase['fillLengthClass'];
  coronal_restoration: TreatmentCase['coronalRestoration'];
  definitive_restoration: TreatmentCase['definitiveRestoration'];
  definitive_restoration_date: string | null;
  source: TreatmentCase['source'];
  archived_at: Timestamp | null;
  created_at: Timestamp;
  updated_at: Timestamp;
  patient_registry_number: string;
  patient_given_name: string;
  patient_family_name: string;
  patient_date_of_birth: string;
  patient_archived_at: Timestamp | null;
  operator_name: string | null;
  operator_email: string;
  referrer_name: string | null;
  referrer_practice_name: string | null;
  referrer_email: string | null;
  referrer_archived_at: Timestamp | null;
};

async function linkedCases(em: EntityManager, c: CaseFields): Promise<{ previousCase: LinkedCase | null; laterCases: LinkedCase[] }> {
  const previousId = c.previousCase?.id ?? null;
  const rows = (await em
    .getKnex()('treatment_case')
    .where('practice_id', c.practice.id)
    .andWhere((w) => {
      w.where('previous_case_id', c.id);
      if (previousId) w.orWhere('id', previousId);
    })
    .select('id', 'kind', 'start_date', 'completion_date', 'archived_at')
    .orderBy([{ column: 'start_date' }, { column: 'id' }])) as { id: string; kind: CaseKind; start_date: string; completion_date: string | null; archived_at: Date | null }[];
  const view = (r: (typeof rows)[number]): LinkedCase => ({
    id: r.id,
    kindLabel: CASE_KIND_LABELS[r.kind],
    startDate: r.start_date,
    completionDate: r.completion_date ?? null,
    archived: r.archived_at !== null,
  });
  const previous = rows.find((r) => r.id === previousId);
  return { previousCase: previous ? view(previous) : null, laterCases: rows.filter((r) => r.id !== previousId).map(view) };
}

function reasonOf(reviews: readonly ReviewView[], id: string | null): string {
  return reviews.find((x) => x.id === id)?.correctionReason ?? '—';
}

async function caseDetail(em: EntityManager, { c, patient, operator, referrer }: CaseRead, settings: PracticeSettings): Promise<CaseDetail> {
  const visitsRead = readVisitFields(em, c.id);
  const [visits, reviews, linked] = await Promise.all([visitsRead, caseReviews(em, c.id, visitsRead), linkedCases(em, c)]);
  const today = todayIn(settings.timeZone);
  const visitList = await visitViews(em, visits, today, reviews.reviews);
  const notation = settings.toothNotation;
  const info = toothInfo(c.tooth);
  const fill = (c.fillLengthClass as FillLengthClass | null) ?? null;
  const timeline: TimelineEntry[] = [
    { date: c.startDate, type: 'treatment-started', title: `${CASE_KIND_LABELS[c.kind as CaseKind]} started` },
  ];
  if (c.completionDate) timeline.push({ date: c.completionDate, type: 'treatment-completed', title: 'Treatment completed' });
  if (c.definitiveRestorationDate) timeline.push({ date: c.definitiveRestorationDate, type: 'definitive-restoration', title: 'Definitive restoration placed' });
  for (const v of visitList) {
    timeline.push({
      date: v.bookedDate ?? v.dueDate,
      type: 'visit',
      title: `${v.milestone}-month recall: ${v.statusLabel.toLowerCase()}`,
      refId: v.id,
      visitStatus: v.status,
    });
  }
  for (const r of reviews.reviews) {
    timeline.push({
      date: r.reviewDate,
      type: 'review',
      title: `Review: ${r.outcomeLabel.toLowerCase()}${r.current ? (r.supersedes ? ' (corrected)' : '') : ' (superseded)'}`,
      refId: r.id,
      outcome: r.outcome,
      detail: r.current ? r.findings : `Superseded by a correction: ${reasonOf(reviews.reviews, r.supersededBy)}`,
      ...(r.current ? {} : { superseded: true }),
    });
  }
  // On one day the visit (attended) comes before the review recorded at it.
  const ORDER = ['treatment-started', 'treatment-completed', 'definitive-restoration', 'visit', 'review'];
  timeline.sort((a, b) => (a.date < b.date ? -1 : a.date > b.date ? 1 : ORDER.indexOf(a.type) - ORDER.indexOf(b.type)));
  return {
    id: c.id,
    patient: {
      id: patient.id,
      registryNumber: patient.registryNumber,
      givenName: patient.givenName,
      familyName: patient.familyName,
      name: displayName(patient),
      dateOfBirth: patient.dateOfBirth,
      archived: Boolean(patient.archivedAt),
    },
    tooth: formatTooth(c.tooth, notation),
    toothFdi: c.tooth,
    toothName: info.name,
    toothGroup: c.toothGroup as ToothGroup,
    toothArch: c.toothArch as 'upper' | 'lower',
    notation,
    kind: c.kind as CaseKind,
    kindLabel: CASE_KIND_LABELS[c.kind as CaseKind],
    operator: { id: operator.id, name: operator.name, email: operator.email },
    referrer: referrer ? referrerView(referrer) : null,
    startDate: c.startDate,
    completionDate: c.completionDate ?? null,
    stage: c.completionDate ? 'completed' : 'in_progress',
    values: caseValues(c),
    fields: fieldsFor(c.kind as CaseKind),
    canals: (c.canals ?? []).map((canal) => ({
      ...canal,
      fillLengthClass: canal.fillToApexMm === undefined || canal.fillToApexMm === null ? null : fillLengthClass(canal.fillToApexMm),
    })),
    fillLengthClass: fill,
    fillLengthLabel: fill ? FILL_LENGTH_LABELS[fill] : null,
    visits: visitList,
    reviews: reviews.reviews,
    currentOutcome: reviews.currentOutcome,
    currentOutcomeLabel: reviews.currentOutcome ? OUTCOME_LABELS[reviews.currentOutcome] : null,
    latestOutcome: reviews.latestOutcome,
    caution: SCORING_CAUTION,
    timeline,
    source: c.source as 'form' | 'import' | 'demo',
    ...linked,
    archived: Boolean(c.archivedAt),
    createdAt: c.createdAt.toISOString(),
    updatedAt: c.updatedAt.toISOString(),
  };
}

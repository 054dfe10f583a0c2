import 'server-only';
/** One case as its page shows it: details, timeline, visits, reviews and the tooth's linked cases. */
import type { Ref } from '@mikro-orm/core';
import type { EntityManager } from '@mikro-orm/postgresql';
import { PatientSchema, ReferrerSchema, UserSchema, type TreatmentCase } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { CASE_KIND_LABELS, fieldsFor, type Canal, type CaseCreate, type CaseFieldsForKind, type CaseKind } from '@/lib/schemas/case';
import type { VisitStatus } from '@/lib/recall';
import { FILL_LENGTH_LABELS, OUTCOME_LABELS, SCORING_CAUTION, fillLengthClass, type FillLengthClass, type ReviewOutcome } from '@/lib/scoring';
import { formatTooth, toothInfo, type ToothGroup, type ToothNotation } from '@/lib/teeth';
import { auditRead } from './audit';
import { displayName, findCase, practiceSettings, todayIn, type PracticeSettings } from './registry-common';
import { referrerView, type ReferrerView } from './referrers';
import { caseReviews, type ReviewView } from './reviews';
import { readVisitFields, visitViews, type VisitView } from './visits';
import { caseValues } from './case-columns';

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
  const [c, settings] = await Promise.all([findCase(em, actor, id, true), practiceSettings(em, actor.practiceId)]);
  // The case is the actor's to see (found in their practice): its read is recorded beside the reading.
  const [detail] = await Promise.all([
    caseDetail(em, c, settings),
    auditRead(em, actor, { action: 'case.read', entityType: 'case', entityId: c.id, detail: { patientId: c.patient.id } }),
  ]);
  return detail;
}

async function linkedCases(em: EntityManager, c: TreatmentCase): Promise<{ previousCase: LinkedCase | null; laterCases: LinkedCase[] }> {
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

/** A reference's entity as an earlier read of this request loaded it, else `read` now. */
function loadedOr<T extends object, R>(ref: Ref<T>, read: () => Promise<R>): T | Promise<R> {
  return ref.isInitialized() ? (ref.unwrap() as T) : read();
}

export async function caseDetail(em: EntityManager, c: TreatmentCase, settings: PracticeSettings): Promise<CaseDetail> {
  const visitsRead = readVisitFields(em, c.id);
  // The patient, clinician and referrer as the case's read brought them (the case page joins them), else read.
  const [patient, operator, referrer, visits, reviews, linked] = await Promise.all([
    loadedOr(c.patient, () => em.findOneOrFail(PatientSchema, c.patient.id)),
    loadedOr(c.operator, () => em.findOneOrFail(UserSchema, c.operator.id, { fields: ['id', 'name', 'email'] })),
    c.referrer ? loadedOr(c.referrer, () => em.findOne(ReferrerSchema, c.referrer!.id)) : null,
    visitsRead,
    caseReviews(em, c.id, visitsRead),
    linkedCases(em, c),
  ]);
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
    operator: { id: operator.id, name: operator.name ?? null, email: operator.email },
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

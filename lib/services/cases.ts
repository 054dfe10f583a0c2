import 'server-only';
import { randomUUID } from 'node:crypto';
import { z } from 'zod';
import type { Knex } from '@mikro-orm/knex';
import type { EntityManager } from '@mikro-orm/postgresql';
import {
  MembershipSchema,
  PatientSchema,
  RecallVisitSchema,
  ReferrerSchema,
  ReviewSchema,
  TreatmentCaseSchema,
  UserSchema,
  patientSearchSql,
  type RecallVisit,
  type TreatmentCase,
} from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { Paging } from '@/lib/schemas/paging';
import {
  CASE_KINDS,
  CASE_KIND_LABELS,
  CaseCreateSchema,
  CaseUpdateSchema,
  fieldsFor,
  type Canal,
  type CaseCreate,
  type CaseFieldsForKind,
  type CaseKind,
} from '@/lib/schemas/case';
import { VISIT_STATUSES, VISIT_STATUS_LABELS, markPastDue, planImportedVisits, replan, type RecallPolicy, type VisitStatus } from '@/lib/recall';
import { FILL_LENGTH_LABELS, OUTCOME_LABELS, SCORING_CAUTION, currentOutcome, fillLengthClass, type FillLengthClass, type ReviewOutcome } from '@/lib/scoring';
import { TOOTH_GROUPS, formatTooth, toothInfo, toothNotationLabel, type ToothGroup, type ToothNotation } from '@/lib/teeth';
import { audit } from './audit';
import { ConflictError, ValidationError } from './errors';
import { parseInput } from './parse';
import {
  ArchivedFilter,
  SearchText,
  SortDir,
  assertClinician,
  assertId,
  bodyId,
  caseFillLengthClass,
  displayName,
  findCase,
  likeWord,
  listParam,
  pageOffset,
  practiceSettings,
  presentKeys,
  queryDate,
  searchWords,
  todayIn,
  whereArchived,
  type Page,
  type PracticeSettings,
} from './registry-common';
import { referrerView, type ReferrerView } from './referrers';
import { caseReviews, reassessReviews, type ReviewView } from './reviews';
import { loadVisits, setVisitSummary, visitViews, type VisitView } from './visits';

// --- the list -------------------------------------------------------------------------------------

export const CASE_SORTS = ['completionDate', 'startDate', 'tooth', 'kind', 'patient', 'registryNumber', 'operator', 'nextVisit', 'createdAt'] as const;
export type CaseSort = (typeof CASE_SORTS)[number];

/**
 * The case list's query string. Lists are comma-separated (`kind=primary_treatment,apical_surgery`).
 * `visitStatus` and `dueFrom`/`dueTo` apply to the same visit: "has a visit in one of these
 * statuses, due in this range".
 */
export const CaseListQuery = Paging.extend({
  q: SearchText,
  operator: listParam(z.uuid({ error: 'Unknown clinician.' })),
  kind: listParam(z.enum(CASE_KINDS, { error: `kind is one of ${CASE_KINDS.join(', ')}.` })),
  toothGroup: listParam(z.enum(TOOTH_GROUPS as [ToothGroup, ...ToothGroup[]], { error: `toothGroup is one of ${TOOTH_GROUPS.join(', ')}.` })),
  arch: z.enum(['upper', 'lower'], { error: 'arch is upper or lower.' }).optional(),
  fillLength: listParam(z.enum(['within', 'short', 'beyond'], { error: 'fillLength is within, short or beyond.' })),
  visitStatus: listParam(z.enum(VISIT_STATUSES, { error: `visitStatus is one of ${VISIT_STATUSES.join(', ')}.` })),
  dueFrom: queryDate('the first due date'),
  dueTo: queryDate('the last due date'),
  completedFrom: queryDate('the first completion date'),
  completedTo: queryDate('the last completion date'),
  stage: z.enum(['all', 'completed', 'in_progress'], { error: 'stage is all, completed or in_progress.' }).default('all'),
  patient: z.uuid({ error: 'Unknown patient.' }).optional(),
  archived: ArchivedFilter,
  sort: z.enum(CASE_SORTS, { error: `sort is one of ${CASE_SORTS.join(', ')}.` }).default('completionDate'),
  dir: SortDir('desc'),
});
export type CaseListQueryInput = z.input<typeof CaseListQuery>;
export type CaseListFilters = z.output<typeof CaseListQuery>;

export interface CaseRow {
  id: string;
  patient: { id: string; registryNumber: string; name: string; archived: boolean };
  /** The tooth in the practice's notation (see CasePage.notation). */
  tooth: string;
  toothFdi: number;
  toothName: string;
  toothGroup: ToothGroup;
  toothArch: 'upper' | 'lower';
  kind: CaseKind;
  kindLabel: string;
  operator: { id: string; name: string | null };
  startDate: string;
  completionDate: string | null;
  fillLengthClass: FillLengthClass | null;
  /** The earliest open recall visit. */
  nextVisit: { date: string; status: VisitStatus; statusLabel: string } | null;
  /** lib/scoring currentOutcome of the case's reviews; null before the first. */
  currentOutcome: ReviewOutcome | null;
  reviewCount: number;
  archived: boolean;
}

export interface CasePage extends Page<CaseRow> {
  notation: ToothNotation;
  /** Column heading for the tooth: "Tooth (FDI)" or "Tooth (Universal)". */
  toothLabel: string;
  sort: CaseSort;
  dir: 'asc' | 'desc';
}

const SORT_COLUMNS: Record<CaseSort, string[]> = {
  completionDate: ['c.completion_date'],
  startDate: ['c.start_date'],
  tooth: ['c.tooth'],
  kind: ['c.kind', 'c.completion_date'],
  patient: ['p.family_name', 'p.given_name'],
  registryNumber: ['p.registry_number'],
  operator: ['u.name'],
  nextVisit: ['c.next_visit_date'],
  createdAt: ['c.created_at'],
};

/** Builds the filtered (unsorted, unpaged) case query; shared by the list and the count. */
export function caseListQuery(knex: Knex, practiceId: string, f: CaseListFilters): Knex.QueryBuilder {
  const b = whereArchived(knex('treatment_case as c').where('c.practice_id', practiceId), 'c.archived_at', f.archived);
  if (f.stage === 'completed') b.whereNotNull('c.completion_date');
  if (f.stage === 'in_progress') b.whereNull('c.completion_date');
  if (f.patient) b.where('c.patient_id', f.patient);
  if (f.operator) b.whereIn('c.operator_id', f.operator);
  if (f.kind) b.whereIn('c.kind', f.kind);
  if (f.toothGroup) b.whereIn('c.tooth_group', f.toothGroup);
  if (f.arch) b.where('c.tooth_arch', f.arch);
  if (f.fillLength) b.whereIn('c.fill_length_class', f.fillLength);
  if (f.completedFrom) b.where('c.completion_date', '>=', f.completedFrom);
  if (f.completedTo) b.where('c.completion_date', '<=', f.completedTo);
  if (f.visitStatus && !f.dueFrom && !f.dueTo) {
    // The case's own summary of its visit statuses (kept by the trigger on recall_visit): an
    // index-only scan of the working-list index, no join.
    b.whereRaw(`c.visit_statuses && array[${f.visitStatus.map(() => '?').join(', ')}]::text[]`, f.visitStatus);
  } else if (f.visitStatus || f.dueFrom || f.dueTo) {
    b.whereExists(function (this: Knex.QueryBuilder) {
      this.select(knex.raw('1')).from('recall_visit as v').whereRaw('v.case_id = c.id').andWhere('v.practice_id', practiceId);
      if (f.visitStatus) this.whereIn('v.status', f.visitStatus);
      if (f.dueFrom) this.where('v.due_date', '>=', f.dueFrom);
      if (f.dueTo) this.where('v.due_date', '<=', f.dueTo);
    });
  }
  const words = searchWords(f.q);
  if (words.length) {
    const patients = knex('patient as sp').select('sp.id').where('sp.practice_id', practiceId);
    for (const w of words) patients.whereRaw(`${patientSearchSql('sp')} like ?`, [likeWord(w)]);
    b.whereIn('c.patient_id', patients);
  }
  return b;
}

/**
 * One page of the practice's cases with server-side filters, sort and paging. Rows are plain
 * and serialisable, the tooth shown in the practice's notation. One audit event per request,
 * naming the cases shown.
 */
export async function listCases(em: EntityManager, actor: Actor, raw: unknown): Promise<CasePage> {
  assertCan(actor, 'patient.read');
  const f = parseInput(CaseListQuery, raw);
  const settings = await practiceSettings(em, actor.practiceId);
  const result = await queryCases(em, actor.practiceId, f, settings.toothNotation);
  await audit(em, actor, {
    action: 'case.list',
    entityType: 'case',
    detail: {
      page: f.page,
      pageSize: f.pageSize,
      filters: usedFilters(f),
      searched: Boolean(f.q),
      ids: result.rows.map((r) => r.id),
    },
  });
  return result;
}

const LIST_DEFAULTS = CaseListQuery.parse({}) as Record<string, unknown>;

/** The names of the filters and sort a request used (not their values: a search may name a patient). */
function usedFilters(f: CaseListFilters): string[] {
  return Object.entries(f)
    .filter(([k, v]) => v !== undefined && !['page', 'pageSize', 'q'].includes(k) && v !== LIST_DEFAULTS[k])
    .map(([k]) => k)
    .sort();
}

/** The list query itself, without permission check or audit (for the patient page and the benchmark). */
export async function queryCases(em: EntityManager, practiceId: string, f: CaseListFilters, notation: ToothNotation): Promise<CasePage> {
  const knex = em.getKnex();
  const base = caseListQuery(knex, practiceId, f);
  const order = [...SORT_COLUMNS[f.sort], 'c.id'].map((column) => ({ column, order: f.dir }));
  const needsPatientJoinForSort = f.sort === 'patient' || f.sort === 'registryNumber';
  const needsUserJoinForSort = f.sort === 'operator';
  // Sort and page on the case table (joining only what the sort needs), then fetch the page's details.
  const pageQuery = base.clone().select('c.id');
  // The practice condition on the patient lets PostgreSQL walk the patient name index in order.
  if (needsPatientJoinForSort) pageQuery.join('patient as p', (j) => j.on('p.id', 'c.patient_id').andOnVal('p.practice_id', practiceId));
  if (needsUserJoinForSort) pageQuery.join('app_user as u', 'u.id', 'c.operator_id');
  pageQuery
    .orderBy(order)
    .limit(f.pageSize)
    .offset(pageOffset(f));
  const [countRows, idRows] = await Promise.all([base.clone().count<{ n: string }[]>('* as n'), pageQuery]);
  const ids = idRows.map((r: { id: string }) => r.id);
  const rows = ids.length ? await caseRowsByIds(em, ids, notation) : [];
  return {
    rows,
    total: Number(countRows[0]?.n ?? 0),
    page: f.page,
    pageSize: f.pageSize,
    notation,
    toothLabel: toothNotationLabel(notation),
    sort: f.sort,
    dir: f.dir,
  };
}

/** List rows for the given case ids, in that order. */
async function caseRowsByIds(em: EntityManager, ids: string[], notation: ToothNotation): Promise<CaseRow[]> {
  const knex = em.getKnex();
  const [details, reviews] = await Promise.all([
    knex('treatment_case as c')
      .join('patient as p', 'p.id', 'c.patient_id')
      .join('app_user as u', 'u.id', 'c.operator_id')
      .whereIn('c.id', ids)
      .select(
        'c.id',
        'c.tooth',
        'c.tooth_group',
        'c.tooth_arch',
        'c.kind',
        'c.start_date',
        'c.completion_date',
        'c.fill_length_class',
        'c.next_visit_date',
        'c.next_visit_status',
        'c.archived_at',
        'c.operator_id',
        'u.name as operator_name',
        'p.id as patient_id',
        'p.registry_number',
        'p.given_name',
        'p.family_name',
        'p.archived_at as patient_archived_at',
      ),
    knex('review').whereIn('case_id', ids).whereNull('superseded_by_id').select('case_id', 'days_since_completion', 'outcome'),
  ]);
  const reviewsOf = new Map<string, { daysSinceTreatment: number; outcome: ReviewOutcome }[]>();
  for (const r of reviews as { case_id: string; days_since_completion: number; outcome: ReviewOutcome }[]) {
    const list = reviewsOf.get(r.case_id) ?? [];
    list.push({ daysSinceTreatment: r.days_since_completion, outcome: r.outcome });
    reviewsOf.set(r.case_id, list);
  }
  const byId = new Map((details as Record<string, unknown>[]).map((d) => [d.id as string, d]));
  return ids.flatMap((id) => {
    const d = byId.get(id);
    if (!d) return [];
    const fdi = Number(d.tooth);
    const list = reviewsOf.get(id) ?? [];
    const status = d.next_visit_status as VisitStatus | null;
    return [
      {
        id,
        patient: {
          id: d.patient_id as string,
          registryNumber: d.registry_number as string,
          name: displayName({ givenName: d.given_name as string, familyName: d.family_name as string }),
          archived: d.patient_archived_at !== null,
        },
        tooth: formatTooth(fdi, notation),
        toothFdi: fdi,
        toothName: toothInfo(fdi).name,
        toothGroup: d.tooth_group as ToothGroup,
        toothArch: d.tooth_arch as 'upper' | 'lower',
        kind: d.kind as CaseKind,
        kindLabel: CASE_KIND_LABELS[d.kind as CaseKind],
        operator: { id: d.operator_id as string, name: (d.operator_name as string | null) ?? null },
        startDate: d.start_date as string,
        completionDate: (d.completion_date as string | null) ?? null,
        fillLengthClass: (d.fill_length_class as FillLengthClass | null) ?? null,
        nextVisit: d.next_visit_date && status ? { date: d.next_visit_date as string, status, statusLabel: VISIT_STATUS_LABELS[status] } : null,
        currentOutcome: list.length ? currentOutcome(list) : null,
        reviewCount: list.length,
        archived: d.archived_at !== null,
      } satisfies CaseRow,
    ];
  });
}

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
  const c = await findCase(em, actor, id);
  const detail = await caseDetail(em, c, await practiceSettings(em, actor.practiceId));
  await audit(em, actor, { action: 'case.read', entityType: 'case', entityId: c.id, detail: { patientId: c.patient.id } });
  return detail;
}

/** A patient's cases for the patient page (newest first, archived included and marked). */
export async function listPatientCases(em: EntityManager, actor: Actor, patientId: string): Promise<CaseRow[]> {
  assertCan(actor, 'patient.read');
  const settings = await practiceSettings(em, actor.practiceId);
  const page = await queryCases(
    em,
    actor.practiceId,
    CaseListQuery.parse({ patient: assertId(patientId, 'patient'), archived: 'include', pageSize: 200 }),
    settings.toothNotation,
  );
  return page.rows;
}

// --- changes --------------------------------------------------------------------------------------

/**
 * Creates a case. A case entered with its completion date gets its recall visits from the
 * practice's policy at once (those whose window has already ended are marked missed, as for
 * imported cases). Dates in the future are refused.
 */
export async function createCase(em: EntityManager, actor: Actor, raw: unknown): Promise<CaseDetail> {
  assertCan(actor, 'case.write');
  const input = parseInput(CaseCreateSchema, raw);
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  await checkReferences(em, actor, input, today);
  await checkPreviousCase(em, actor, input);
  const id = randomUUID();
  const c = await em.transactional(async (tx) => {
    const entity = tx.create(TreatmentCaseSchema, {
      id,
      practice: actor.practiceId,
      createdBy: actor.userId,
      source: 'form',
      ...caseColumns(input),
      patient: input.patientId,
      operator: input.operatorId,
    });
    const visits = input.completionDate ? createPlannedVisits(tx, entity, input.completionDate, settings.recallPolicy, today) : [];
    setVisitSummary(entity, visits);
    await tx.flush();
    return entity;
  });
  await audit(em, actor, {
    action: 'case.created',
    entityType: 'case',
    entityId: c.id,
    detail: { patientId: input.patientId, completed: Boolean(input.completionDate), previousCaseId: input.previousCaseId ?? null },
  });
  return caseDetail(em, c, settings);
}

export interface CaseUpdateResult extends CaseDetail {
  /** What the change did to the recall plan. */
  plan: { created: number; moved: number; kept: number; removed: number; reassessedReviews: number };
}

/**
 * Changes some fields of a case; the merged case is validated as a whole. Setting the
 * completion date creates the recall plan; changing it moves only the visits not yet attended
 * or ended (lib/recall replan) and re-computes the reviews' outcomes; clearing it is allowed
 * only while every visit is still planned and there is no review. `archived: true|false`
 * archives or restores.
 */
export async function updateCase(em: EntityManager, actor: Actor, id: string, raw: unknown): Promise<CaseUpdateResult> {
  assertCan(actor, 'case.write');
  const c = await findCase(em, actor, id);
  const body = raw && typeof raw === 'object' && !Array.isArray(raw) ? (raw as Record<string, unknown>) : {};
  const archived = body.archived;
  if (archived !== undefined && typeof archived !== 'boolean') {
    throw new ValidationError('Some fields need attention.', { archived: ['archived is true or false.'] });
  }
  const { archived: _archived, ...rest } = body;
  const patch = parseInput(CaseUpdateSchema, { kind: c.kind, ...rest }) as Record<string, unknown>;
  const merged = parseInput(CaseCreateSchema, { ...caseValues(c), ...presentKeys(patch, { kind: c.kind, ...rest }) });
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  await checkReferences(em, actor, merged, today, c);
  await checkPreviousCase(em, actor, merged, c);

  const plan = { created: 0, moved: 0, kept: 0, removed: 0, reassessedReviews: 0 };
  const wasArchived = Boolean(c.archivedAt);
  const before = { completionDate: c.completionDate ?? null, paiScore: c.paiScore };
  const changedFields = changedKeys(caseValues(c), merged);
  await em.transactional(async (tx) => {
    const entity = await tx.findOneOrFail(TreatmentCaseSchema, c.id);
    tx.assign(entity, caseColumns(merged));
    const visits = await loadVisits(tx, entity.id);
    const after = merged.completionDate ?? null;
    if (after !== before.completionDate) {
      if (!after) {
        const reviews = await tx.count(ReviewSchema, { case: entity.id });
        if (reviews > 0 || visits.some((v) => v.status !== 'planned')) {
          throw new ConflictError('The case has visits under way or reviews: correct the completion date instead of clearing it.');
        }
        for (const v of visits) tx.remove(v);
        plan.removed = visits.length;
        visits.length = 0;
      } else if (!before.completionDate) {
        visits.push(...createPlannedVisits(tx, entity, after, settings.recallPolicy, today));
        plan.created = visits.length;
      } else {
        const r = replan(visits.map(toExisting), after, settings.recallPolicy);
        const byId = new Map(visits.map((v) => [v.id, v]));
        for (const m of r.move) {
          const v = byId.get(m.id)!;
          v.dueDate = m.to.dueDate;
          v.windowStart = m.to.windowStart;
          v.windowEnd = m.to.windowEnd;
          if (m.reinvite) v.reinviteNeeded = true;
        }
        for (const add of r.add) {
          const [v] = createVisits(tx, entity, [{ ...add, status: 'planned' }]);
          visits.push(v!);
        }
        for (const change of markPastDue(visits.map(toExisting), today)) {
          const v = byId.get(change.id) ?? visits.find((x) => x.id === change.id)!;
          v.status = change.to;
          v.statusChangedAt = new Date();
        }
        plan.moved = r.move.length;
        plan.created = r.add.length;
        plan.kept = r.keep.length;
      }
    }
    if (after !== before.completionDate || merged.paiScore !== before.paiScore) {
      plan.reassessedReviews = await reassessReviews(tx, entity);
    }
    setVisitSummary(entity, visits);
    if (archived === true && !entity.archivedAt) entity.archivedAt = new Date();
    if (archived === false && entity.archivedAt) entity.archivedAt = null;
    await tx.flush();
  });
  await em.refresh(c);
  if (changedFields.length || plan.created || plan.moved || plan.removed) {
    await audit(em, actor, { action: 'case.updated', entityType: 'case', entityId: c.id, detail: { fields: changedFields, plan } });
  }
  if (archived === true && !wasArchived) await audit(em, actor, { action: 'case.archived', entityType: 'case', entityId: c.id });
  if (archived === false && wasArchived) await audit(em, actor, { action: 'case.restored', entityType: 'case', entityId: c.id });
  return { ...(await caseDetail(em, c, settings)), plan };
}

/** Archives a case: out of the working lists, its record and visits kept. Archiving twice changes nothing. */
export async function archiveCase(em: EntityManager, actor: Actor, id: string): Promise<CaseDetail> {
  assertCan(actor, 'case.write');
  const c = await findCase(em, actor, id);
  if (!c.archivedAt) {
    c.archivedAt = new Date();
    await em.flush();
    await audit(em, actor, { action: 'case.archived', entityType: 'case', entityId: c.id });
  }
  return caseDetail(em, c, await practiceSettings(em, actor.practiceId));
}

export interface ClinicianView {
  id: string;
  name: string | null;
  email: string;
}

/** The practice's active clinicians, for the operator picker and the list filter. */
export async function listClinicians(em: EntityManager, actor: Actor): Promise<ClinicianView[]> {
  assertCan(actor, 'patient.read');
  const memberships = await em.find(
    MembershipSchema,
    { practice: actor.practiceId, role: 'clinician', revokedAt: null },
    { populate: ['user'], orderBy: { user: { name: 'asc', email: 'asc' } } },
  );
  return memberships.map((m) => ({ id: m.user.$.id, name: m.user.$.name ?? null, email: m.user.$.email }));
}

// --- helpers shared with the import and the seed ---------------------------------------------------

/** The stored columns of a validated case (derived tooth group, arch, canal count, fill-length class). */
export function caseColumns(input: Omit<CaseCreate, 'patientId' | 'operatorId' | 'referrerId'> & { patientId?: string; operatorId?: string; referrerId?: string }) {
  const tooth = toothInfo(input.tooth);
  const canals = input.kind === 'primary_treatment' || input.kind === 'nonsurgical_retreatment' ? (input.canals ?? []) : [];
  return {
    ...(input.patientId ? { patient: input.patientId } : {}),
    ...(input.operatorId ? { operator: input.operatorId } : {}),
    referrer: input.referrerId ?? null,
    tooth: tooth.fdi,
    toothGroup: tooth.group,
    toothArch: tooth.arch,
    kind: input.kind,
    startDate: input.startDate,
    completionDate: input.completionDate ?? null,
    pulpalDiagnosis: input.pulpalDiagnosis,
    apicalDiagnosis: input.apicalDiagnosis,
    paiScore: input.paiScore,
    lesionDiameterMm: input.lesionDiameterMm,
    preopSymptoms: input.preopSymptoms ?? [],
    sinusTract: input.sinusTract ?? null,
    probingDepthMm: input.probingDepthMm ?? null,
    canals,
    canalCount: canals.length,
    fillingTechnique: input.fillingTechnique ?? null,
    sealerClass: input.sealerClass ?? null,
    apicalPatency: input.apicalPatency ?? null,
    complications: input.complications ?? [],
    rootEndFilling: input.rootEndFilling ?? null,
    pulpTherapyType: input.pulpTherapyType ?? null,
    cappingMaterial: input.cappingMaterial ?? null,
    fillDensity: input.fillDensity ?? null,
    fillLengthClass: caseFillLengthClass(canals),
    coronalRestoration: input.coronalRestoration ?? null,
    definitiveRestoration: input.definitiveRestoration ?? null,
    definitiveRestorationDate: input.definitiveRestorationDate ?? null,
    previousCase: input.previousCaseId ?? null,
  };
}

/** The stored case as CaseCreateSchema input (nulls left out). */
export function caseValues(c: TreatmentCase): CaseCreate {
  const v: Record<string, unknown> = {
    patientId: c.patient.id,
    tooth: c.tooth,
    kind: c.kind,
    operatorId: c.operator.id,
    referrerId: c.referrer?.id,
    startDate: c.startDate,
    completionDate: c.completionDate,
    pulpalDiagnosis: c.pulpalDiagnosis,
    apicalDiagnosis: c.apicalDiagnosis,
    paiScore: c.paiScore,
    lesionDiameterMm: Number(c.lesionDiameterMm),
    preopSymptoms: c.preopSymptoms,
    sinusTract: c.sinusTract,
    probingDepthMm: c.probingDepthMm,
    canals: c.canals,
    fillingTechnique: c.fillingTechnique,
    sealerClass: c.sealerClass,
    apicalPatency: c.apicalPatency,
    complications: c.complications,
    rootEndFilling: c.rootEndFilling,
    pulpTherapyType: c.pulpTherapyType,
    cappingMaterial: c.cappingMaterial,
    fillDensity: c.fillDensity,
    coronalRestoration: c.coronalRestoration,
    definitiveRestoration: c.definitiveRestoration,
    definitiveRestorationDate: c.definitiveRestorationDate,
    previousCaseId: c.previousCase?.id,
  };
  for (const k of Object.keys(v)) if (v[k] === null || v[k] === undefined) delete v[k];
  return v as CaseCreate;
}

/** Creates the visits of a case completed on `completionDate`; those already past due are missed. */
export function createPlannedVisits(em: EntityManager, c: TreatmentCase, completionDate: string, policy: RecallPolicy, today: string): RecallVisit[] {
  return createVisits(em, c, planImportedVisits(completionDate, policy, today));
}

function createVisits(
  em: EntityManager,
  c: TreatmentCase,
  planned: { milestone: number; dueDate: string; windowStart: string; windowEnd: string; status: VisitStatus }[],
): RecallVisit[] {
  return planned.map(
    (p) =>
      em.create(RecallVisitSchema, {
        practice: c.practice,
        case: c,
        milestone: p.milestone,
        dueDate: p.dueDate,
        windowStart: p.windowStart,
        windowEnd: p.windowEnd,
        status: p.status,
        // A visit created past its window (a case entered late, an import) is missed because its window ended.
        ...(p.status === 'missed' ? { missedReason: 'window_ended' } : {}),
      }),
  );
}

function toExisting(v: RecallVisit) {
  return { id: v.id, milestone: v.milestone, dueDate: v.dueDate, windowStart: v.windowStart, windowEnd: v.windowEnd, status: v.status as VisitStatus };
}

function changedKeys(before: Record<string, unknown>, after: Record<string, unknown>): string[] {
  const keys = new Set([...Object.keys(before), ...Object.keys(after)]);
  return [...keys].filter((k) => stable(before[k] ?? null) !== stable(after[k] ?? null)).sort();
}

/** JSON with object keys sorted (jsonb gives canals back with its own key order). */
function stable(v: unknown): string {
  return JSON.stringify(v, (_k, value: unknown) =>
    value && typeof value === 'object' && !Array.isArray(value)
      ? Object.fromEntries(Object.entries(value as Record<string, unknown>).sort(([a], [b]) => a.localeCompare(b)))
      : value,
  );
}

async function checkReferences(em: EntityManager, actor: Actor, input: CaseCreate, today: string, existing?: TreatmentCase) {
  const fieldErrors: Record<string, string[]> = {};
  const patientId = bodyId(input.patientId, 'patientId', 'Choose a patient of this practice.')!;
  if (!existing || existing.patient.id !== patientId) {
    const patient = await em.findOne(PatientSchema, { id: patientId, practice: actor.practiceId }, { fields: ['id', 'archivedAt'] });
    if (!patient) fieldErrors.patientId = ['Choose a patient of this practice.'];
    else if (patient.archivedAt) fieldErrors.patientId = ['The patient is archived: restore them before adding a case.'];
  }
  if (!existing || existing.operator.id !== input.operatorId) await assertClinician(em, actor.practiceId, input.operatorId, 'operatorId');
  if (input.referrerId) {
    const referrerId = bodyId(input.referrerId, 'referrerId', 'Choose a referrer of this practice.')!;
    if ((await em.count(ReferrerSchema, { id: referrerId, practice: actor.practiceId })) === 0) {
      fieldErrors.referrerId = ['Choose a referrer of this practice.'];
    }
  }
  if (input.startDate > today) fieldErrors.startDate = ['The start date is in the future.'];
  if (input.completionDate && input.completionDate > today) fieldErrors.completionDate = ['The completion date is in the future.'];
  if (Object.keys(fieldErrors).length) throw new ValidationError('Some fields need attention.', fieldErrors);
}

const PREVIOUS_CASE_UNKNOWN = 'Choose an earlier case of this patient’s tooth.';

/**
 * The link to the tooth's earlier case (`previousCaseId`): a case of this practice (another
 * practice's id is answered as an unknown one), of the same patient and tooth, completed on or
 * before this case's start, not this case nor a case that follows it, and not already followed by
 * another case (a tooth's cases form one chain). On an edit, the cases that follow this one must
 * still agree with its patient, tooth and completion date.
 */
async function checkPreviousCase(em: EntityManager, actor: Actor, input: CaseCreate, existing?: TreatmentCase) {
  const fail = (message: string, field = 'previousCaseId'): never => {
    throw new ValidationError('Some fields need attention.', { [field]: [message] });
  };
  if (existing) {
    const later = await em.find(TreatmentCaseSchema, { previousCase: existing.id, practice: actor.practiceId }, { fields: ['id', 'patient', 'tooth', 'startDate'] });
    for (const l of later) {
      if (l.patient.id !== input.patientId) fail('A later treatment of this tooth is linked to this case: the patient cannot change.', 'patientId');
      if (l.tooth !== input.tooth) fail('A later treatment of this tooth is linked to this case: the tooth cannot change.', 'tooth');
      if (!input.completionDate) fail('A later treatment of this tooth is linked to this case: it stays completed.', 'completionDate');
      if (input.completionDate! > l.startDate) fail(`A later treatment of this tooth started on ${l.startDate}: this case is completed by then.`, 'completionDate');
    }
  }
  if (!input.previousCaseId) return;
  const id = bodyId(input.previousCaseId, 'previousCaseId', PREVIOUS_CASE_UNKNOWN)!;
  if (existing && id === existing.id) fail('A case cannot follow itself: choose an earlier case of the tooth.');
  const previous = await em.findOne(TreatmentCaseSchema, { id, practice: actor.practiceId }, { fields: ['id', 'patient', 'tooth', 'completionDate', 'previousCase'] });
  if (!previous) fail(PREVIOUS_CASE_UNKNOWN);
  const p = previous!;
  if (p.patient.id !== input.patientId) fail('The earlier case is of another patient: choose a case of this patient.');
  if (p.tooth !== input.tooth) fail(`The earlier case treated tooth ${formatTooth(p.tooth, 'fdi')} (FDI), not tooth ${formatTooth(input.tooth, 'fdi')}.`);
  if (!p.completionDate) fail('The earlier case is not completed yet: complete it before linking a later treatment to it.');
  if (p.completionDate! > input.startDate) fail(`The earlier case was completed on ${p.completionDate}, after this case started (${input.startDate}).`);
  // No loop: walk back from the earlier case (a tooth has few cases).
  let back = p.previousCase?.id;
  for (let step = 0; back && step < 50; step++) {
    if (existing && back === existing.id) fail('The earlier case already follows this one: choose a case that came before it.');
    const prior = await em.findOne(TreatmentCaseSchema, { id: back, practice: actor.practiceId }, { fields: ['id', 'previousCase'] });
    back = prior?.previousCase?.id;
  }
  const followedBy = await em.findOne(
    TreatmentCaseSchema,
    { previousCase: p.id, practice: actor.practiceId, ...(existing ? { id: { $ne: existing.id } } : {}) },
    { fields: ['id', 'startDate'] },
  );
  if (followedBy) fail(`The earlier case is already followed by a treatment started on ${followedBy.startDate}: link to the latest treatment of the tooth.`);
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

async function caseDetail(em: EntityManager, c: TreatmentCase, settings: PracticeSettings): Promise<CaseDetail> {
  const [patient, operator, referrer, visits, reviews, linked] = await Promise.all([
    em.findOneOrFail(PatientSchema, c.patient.id),
    em.findOneOrFail(UserSchema, c.operator.id, { fields: ['id', 'name', 'email'] }),
    c.referrer ? em.findOne(ReferrerSchema, c.referrer.id) : Promise.resolve(null),
    loadVisits(em, c.id),
    caseReviews(em, c.id),
    linkedCases(em, c),
  ]);
  const today = todayIn(settings.timeZone);
  const visitList = await visitViews(em, visits, today);
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


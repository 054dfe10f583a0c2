import 'server-only';
/** The case list: its query (filters, sorts, paging), its rows, a patient's cases and the clinician picker. */
import { z } from 'zod';
import type { Knex } from '@mikro-orm/knex';
import type { EntityManager } from '@mikro-orm/postgresql';
import { MembershipSchema, patientSearchSql } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { Paging } from '@/lib/schemas/paging';
import { CASE_KINDS, CASE_KIND_LABELS, type CaseKind } from '@/lib/schemas/case';
import { VISIT_STATUSES, VISIT_STATUS_LABELS, type VisitStatus } from '@/lib/recall';
import { currentOutcome, type FillLengthClass, type ReviewOutcome } from '@/lib/scoring';
import { TOOTH_GROUPS, formatTooth, toothInfo, toothNotationLabel, type ToothGroup, type ToothNotation } from '@/lib/teeth';
import { makeTotalsKeeper } from '@/lib/registry/kept-totals';
import { auditRead } from './audit';
import { parseInput } from './parse';
import {
  ArchivedFilter,
  SearchText,
  SortDir,
  assertId,
  displayName,
  likeWord,
  listParam,
  countOf,
  pageFromOneRead,
  pageOffset,
  practiceSettings,
  queryDate,
  searchWords,
  whereArchived,
  type Page,
} from './registry-common';


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

/** A filter on the visits' due dates (with or without their statuses): answered from the visits. */
const filtersByVisitDates = (f: CaseListFilters) => Boolean(f.dueFrom || f.dueTo);

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
  if (f.visitStatus && !filtersByVisitDates(f)) {
    // The case's own summary of its visit statuses (kept by the trigger on recall_visit): an
    // index-only scan of the working-list index, no join.
    b.whereRaw(`c.visit_statuses && array[${f.visitStatus.map(() => '?').join(', ')}]::text[]`, f.visitStatus);
  } else if (filtersByVisitDates(f)) {
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
  // The page's ids are recorded beside the reading of its rows (one round trip fewer a request).
  return queryCases(em, actor.practiceId, f, settings.toothNotation, (ids) =>
    auditRead(em, actor, {
      action: 'case.list',
      entityType: 'case',
      detail: { page: f.page, pageSize: f.pageSize, filters: usedFilters(f), searched: Boolean(f.q), ids },
    }),
  );
}

const LIST_DEFAULTS = CaseListQuery.parse({}) as Record<string, unknown>;

/** The names of the filters and sort a request used (not their values: a search may name a patient). */
function usedFilters(f: CaseListFilters): string[] {
  return Object.entries(f)
    .filter(([k, v]) => v !== undefined && !['page', 'pageSize', 'q'].includes(k) && v !== LIST_DEFAULTS[k])
    .map(([k]) => k)
    .sort();
}

/**
 * The list query itself, without permission check or audit (for the patient page and the benchmark).
 * `alongside` runs with the page's case ids beside the reading of their rows (the list's audit event).
 */
export async function queryCases(
  em: EntityManager,
  practiceId: string,
  f: CaseListFilters,
  notation: ToothNotation,
  alongside?: (ids: string[]) => Promise<unknown>,
): Promise<CasePage> {
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
  let ids: string[];
  let total: number;
  if (filtersByVisitDates(f)) {
    // Filtered by the visits' due dates: the matching cases come from those visits (a hash semi-join
    // of a few thousand at most), so they are read once (a materialized CTE), then counted and sorted
    // for the page. Side by side, the count read them and the page walked the practice's cases in
    // order probing each one's visits (tens of ms each at 100,000 cases).
    const columns = SORT_COLUMNS[f.sort];
    pageQuery.select(columns.map((c, i) => knex.raw(`${c} as s${i}`)));
    const order = [...columns.map((_, i) => `s${i}`), 'id'].map((column) => ({ column, order: f.dir }));
    ({ ids, total } = await pageFromOneRead(knex, pageQuery, order, f, () => countOf(base.clone())));
  } else {
    pageQuery
      .orderBy(order)
      .limit(f.pageSize)
      .offset(pageOffset(f));
    const [counted, idRows] = await Promise.all([caseListTotal(knex, practiceId, f, base), pageQuery]);
    ids = idRows.map((r: { id: string }) => r.id);
    total = counted;
  }
  const [rows] = await Promise.all([ids.length ? caseRowsByIds(em, ids, notation) : [], alongside?.(ids)]);
  return {
    rows,
    total,
    page: f.page,
    pageSize: f.pageSize,
    notation,
    toothLabel: toothNotationLabel(notation),
    sort: f.sort,
    dir: f.dir,
  };
}

const totals = makeTotalsKeeper(512);

/**
 * The number of cases `f` matches, kept per practice, filters and case-list version
 * (lib/registry/kept-totals.ts): exact, and counted again only after a change to the practice's
 * cases, visits or patients. The version is read first, so a total is never older than its version.
 */
async function caseListTotal(knex: Knex, practiceId: string, f: CaseListFilters, base: Knex.QueryBuilder): Promise<number> {
  const row = (await knex('case_list_version').where('practice_id', practiceId).first('version')) as { version: string | number } | undefined;
  return totals.total(practiceId, String(row?.version ?? 0), f, () => countOf(base.clone()));
}

/** List rows for the given case ids, in that order. */
export async function caseRowsByIds(em: EntityManager, ids: string[], notation: ToothNotation): Promise<CaseRow[]> {
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

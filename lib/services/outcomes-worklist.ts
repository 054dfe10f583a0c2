import 'server-only';
import { createHash } from 'node:crypto';
import type { DataAsOf } from './outcomes-cache';
import { keptRecently } from '@/lib/kept-recently';
import type { EntityManager, Knex } from '@mikro-orm/postgresql';
import { z } from 'zod';
import { CaseDecisionSchema, RecallVisitSchema, TreatmentCaseSchema, type CaseDecision } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { can } from '@/lib/auth/permissions';
import { streamCsv, type CsvValue } from '@/lib/csv/write';
import { openCursor } from '@/lib/db-read';
import { applyFilter, type OutcomeCase, type OutcomeFilter } from '@/lib/outcomes';
import {
  CASE_KIND_OF_STEP,
  decisionStands,
  NEXT_STEP_LABELS,
  orderWorklist,
  planReReviewVisit,
  URGENCY_LABELS,
  WORKLIST_REASON_LABELS,
  worklistEntries,
  worklistEntry,
  yearsOf,
  type CurrentDecision,
  type NextStep,
  type Urgency,
  type WorklistEntry,
  type WorklistReason,
} from '@/lib/outcomes/worklist';
import { addDaysTo, type CalendarDate } from '@/lib/registry/calendar-date';
import { CASE_KIND_LABELS, type CaseKind } from '@/lib/registry/case-kinds';
import { OUTCOME_LABELS, type ReviewOutcome } from '@/lib/scoring';
import { OutcomeFilterQuery } from '@/lib/schemas/outcomes';
import { DecisionInput } from '@/lib/schemas/outcomes-worklist';
import { Paging } from '@/lib/schemas/paging';
import { defaultWindow } from '@/lib/schemas/recall-policy';
import { formatTooth } from '@/lib/teeth';
import { audit, auditRead } from './audit';
import { createCase } from './cases-commands';
import { ConflictError, ForbiddenError, ValidationError } from './errors';
import { currentReviewsJson, filterDetail, recordedReviews, scope, seesWholePractice, type ReviewJson } from './outcomes';
import { parseInput } from './parse';
import { displayName, findCase, knexOf, practiceSettings, todayIn } from './registry-common';
import { loadVisits } from './visits';

/**
 * The non-healing worklist (issue 12, item 7). The rule and the order are lib/outcomes/worklist.ts;
 * this file reads the rows (the outcomes area's one lean read, `scope`), orders the list by the
 * cases' current steps (one lean read of the practice's current steps), adds what the list shows for
 * the cases of the page asked (one more query: tooth, patient, clinician, current step, later case;
 * every case for the CSV), and records next steps.
 *
 * Who: the lead (auditor) sees the practice's worklist, filterable by clinician; a clinician sees
 * their own cases. Recording a step is `outcomes.decide` (clinicians only: a clinical decision, as
 * the case and review records are clinicians' — the lead audits, does not treat), and only on a case
 * the clinician treated: the decision is the treating clinician's. A clinician taking over a tooth
 * makes themselves its clinician on the case form first (any clinician may edit a case).
 */

/** A recorded next step as the list and the history show it. */
interface DecisionBase {
  id: string;
  step: NextStep;
  stepLabel: string;
  date: CalendarDate;
  note: string | null;
  decidedBy: string;
  decidedAt: string;
  linkedCaseId: string | null;
  visitId: string | null;
}

export interface WorklistDecisionView extends DecisionBase {
  decidedOn: CalendarDate;
  /** Recorded on or after the day of the latest review (else it needs looking at again). */
  stands: boolean;
}

export interface WorklistRow {
  caseId: string;
  tooth: string;
  kind: CaseKind;
  kindLabel: string;
  /** Null for a reader without `patient.read`. */
  patient: { id: string; name: string; registryNumber: string } | null;
  clinician: { id: string; name: string };
  completionDate: CalendarDate;
  yearsSinceCompletion: number;
  reason: WorklistReason;
  reasonLabel: string;
  outcome: ReviewOutcome;
  outcomeLabel: string;
  latestReviewDate: CalendarDate;
  symptomatic: boolean;
  noOpenVisit: boolean;
  urgency: Urgency;
  urgencyLabel: string;
  decision: WorklistDecisionView | null;
  /** How many steps were recorded for the case (the history). */
  decisions: number;
  /** The tooth's later case (retreatment, surgery), e.g. the one a decision created. */
  laterCase: { id: string; kind: CaseKind; kindLabel: string; startDate: CalendarDate; completionDate: CalendarDate | null } | null;
  /** The actor may record the next step here (a clinician, on their own case). */
  canDecide: boolean;
}

export interface WorklistReport {
  filter: OutcomeFilter;
  own: boolean;
  /** when the figures' rows were read, and whether entries were saved since (lib/services/outcomes-cache.ts) */
  asOf: DataAsOf;
  clinicians: { id: string; name: string }[];
  today: CalendarDate;
  /** The rows of this page, in urgency order (the CSV: every row). */
  rows: WorklistRow[];
  /** Every case on the list for the filter, and how many are at each urgency. */
  total: number;
  counts: Record<Urgency, number>;
  /** The page shown (a page past the end shows the last) and the page size. */
  page: number;
  pageSize: number;
}

/**
 * What the list shows of a case: one row of the detail read (detailQuery), flat columns. The page
 * reads the `PageColumns` too; the patient's columns only for a reader with `patient.read`.
 */
interface DetailRow {
  id: string;
  tooth: number;
  kind: CaseKind;
  given_name?: string;
  family_name?: string;
  registry_number?: string;
  operator_name: string;
  /** the current step the order was built from (null when none) */
  step: NextStep | null;
  step_date: string | null;
  note: string | null;
  decided_at: Date | null;
  decided_by: string | null;
  /** the tooth's later case */
  later_id: string | null;
  later_kind: CaseKind | null;
  later_start: string | null;
  later_completion: string | null;
}
interface PageColumns {
  patient_id: string;
  decision_id: string | null;
  linked_case_id: string | null;
  visit_id: string | null;
  decisions: number;
}

/**
 * The detail read of the worklist, ONE query for the page's rows (`page`: also the links and the
 * history count the page shows) or, through a cursor, for every row of the CSV (exactly its
 * columns). The cases come in the order given (`entries`, the urgency order) with the current step
 * each one's urgency was built from (readCurrentDecisions), so a row shows that step.
 */
function detailQuery(practiceId: string, entries: readonly { caseId: string; decisionId: string | null }[], o: { page: boolean; patients: boolean }): { sql: string; bindings: Knex.RawBinding[] } {
  const sql = `select c.id, c.tooth, c.kind,${o.patients ? ' p.given_name, p.family_name, p.registry_number,' : ''}
       coalesce(u.name, u.email) as operator_name,
       d.step, d.date::text as step_date, d.note, d.created_at as decided_at, coalesce(du.name, du.email) as decided_by,
       f.id as later_id, f.kind as later_kind, f.start_date::text as later_start, f.completion_date::text as later_completion${
         o.page ? `,\n       c.patient_id, d.id as decision_id, d.linked_case_id, d.visit_id, (select count(*) from case_decision x where x.case_id = c.id)::int as decisions` : ''
       }
  from unnest(?::uuid[], ?::uuid[]) with ordinality as o(case_id, decision_id, n)
  join treatment_case c on c.id = o.case_id and c.practice_id = ?${o.patients ? '\n  join patient p on p.id = c.patient_id' : ''}
  join app_user u on u.id = c.operator_id
  left join case_decision d on d.id = o.decision_id and d.case_id = c.id
  left join app_user du on du.id = d.decided_by_id
  left join lateral (select f.id, f.kind, f.start_date, f.completion_date from treatment_case f
       where f.previous_case_id = c.id and f.practice_id = c.practice_id and f.archived_at is null
       order by f.start_date desc limit 1) f on true
 order by o.n`;
  // a uuid[] with nulls (no current step): the driver writes NULL elements
  return { sql, bindings: [entries.map((e) => e.caseId), entries.map((e) => e.decisionId) as string[], practiceId] };
}

/** The current step of a case (the row no later row replaces), as the order needs it. */
interface CurrentDecisionRow {
  id: string;
  case_id: string;
  step: NextStep;
  date: string;
  created_at: Date;
}

/**
 * The current step of every case of the practice that has one: the few columns the urgency order
 * needs (the rest is read for the rows shown only, detailQuery). Steps are few beside the cases,
 * and they change no data version, so they are read on every request.
 */
async function readCurrentDecisions(em: EntityManager, practiceId: string): Promise<CurrentDecisionRow[]> {
  return (
    await knexOf(em).raw(
      `select distinct on (d.case_id) d.id, d.case_id, d.step, d.date::text as date, d.created_at
         from case_decision d
        where d.practice_id = ? and not exists (select 1 from case_decision n where n.replaces_id = d.id)
        order by d.case_id, d.created_at desc`,
      [practiceId],
    )
  ).rows as CurrentDecisionRow[];
}

/** A recorded step as the detail read gives it. */
interface DecisionRecord {
  id: string;
  step: NextStep;
  date: string;
  note: string | null;
  createdAt: string;
  linkedCaseId: string | null;
  visitId: string | null;
  by: string;
}

function decisionView(d: DecisionRecord, latestReviewDate: CalendarDate, timeZone: string): WorklistDecisionView {
  const decidedAt = new Date(d.createdAt);
  const decidedOn = todayIn(timeZone, decidedAt);
  return {
    id: d.id,
    step: d.step,
    stepLabel: NEXT_STEP_LABELS[d.step],
    date: d.date,
    note: d.note,
    decidedBy: d.by,
    decidedAt: decidedAt.toISOString(),
    decidedOn,
    stands: decisionStands({ step: d.step, date: d.date, decidedOn }, latestReviewDate),
    linkedCaseId: d.linkedCaseId,
    visitId: d.visitId,
  };
}

/** The step of a detail row (the page's columns give its links and id). */
function decisionOf(d: DetailRow & Partial<PageColumns>, latestReviewDate: CalendarDate, timeZone: string): WorklistDecisionView | null {
  if (!d.step) return null;
  return decisionView(
    { id: d.decision_id ?? '', step: d.step, date: d.step_date!, note: d.note, createdAt: new Date(d.decided_at!).toISOString(), linkedCaseId: d.linked_case_id ?? null, visitId: d.visit_id ?? null, by: d.decided_by! },
    latestReviewDate,
    timeZone,
  );
}

const laterCaseOf = (d: DetailRow): WorklistRow['laterCase'] =>
  d.later_id ? { id: d.later_id, kind: d.later_kind!, startDate: d.later_start!, completionDate: d.later_completion, kindLabel: CASE_KIND_LABELS[d.later_kind!] } : null;

const WorklistQuery = z.intersection(OutcomeFilterQuery, Paging);

type OrderedEntry = WorklistEntry & { urgency: Urgency };

/**
 * The list for the actor's filter in urgency order, shared by the page and the CSV: the rule's
 * entries come from the kept figures (per data version); the current steps (one lean read) give the
 * order.
 */
async function orderedWorklist(em: EntityManager, actor: Actor, q: OutcomeFilterQuery) {
  const [s, current] = await Promise.all([scope(em, actor, q), readCurrentDecisions(em, actor.practiceId)]);
  // the rule's entries (and their completion dates) are kept per data version like the other views' figures
  const { entries, completion } = s.memo(['worklist', s.filter], (all) => {
    const listed = worklistEntries(applyFilter(all, s.filter), all, s.today, s.minObs);
    const ids = new Set(listed.map((e) => e.caseId));
    return { entries: listed, completion: new Map(all.filter((c) => ids.has(c.id)).map((c) => [c.id, c.completionDate])) };
  });
  const currentOf = new Map<string, CurrentDecision & { id: string }>();
  for (const d of current) currentOf.set(d.case_id, { id: d.id, step: d.step, date: d.date, decidedOn: todayIn(s.timeZone, new Date(d.created_at)) });
  // The order depends on the entries (the data version, the filter, today, the minimum observation)
  // and on the current steps, which no data version covers: a step is never changed, only replaced
  // by a new row, so their ids name them. Kept for the next request that finds the same.
  const steps = createHash('sha256').update(current.map((d) => d.id).join(',')).digest('base64url'); // thousands of ids, kept short
  const key = JSON.stringify([actor.practiceId, s.version, s.filter, s.today, s.minObs, s.timeZone, steps]);
  const kept = keptRecently(orders, key, MAX_ORDERS, () => {
    const ordered: OrderedEntry[] = orderWorklist(entries, (id) => currentOf.get(id) ?? null, s.today);
    const counts: Record<Urgency, number> = { decide: 0, overdue: 0, in_hand: 0 };
    for (const e of ordered) counts[e.urgency]++;
    return { ordered, counts };
  });
  const detailOf = (shown: readonly OrderedEntry[]) => shown.map((e) => ({ caseId: e.caseId, decisionId: currentOf.get(e.caseId)?.id ?? null }));
  return { s, ordered: kept.ordered, counts: kept.counts, completion, detailOf };
}

/** Worklists in urgency order, kept per practice, data version, filter and current steps (see orderedWorklist); never changed once kept. */
const MAX_ORDERS = 32;
const orders = new Map<string, { ordered: readonly OrderedEntry[]; counts: Readonly<Record<Urgency, number>> }>();

/** What a worklist page shows, known before its details are read (for its audit event). */
export interface WorklistShown {
  filter: OutcomeFilter;
  cases: number;
  page: number;
  rows: number;
}

/**
 * The list for the actor's filter in urgency order, and the rows of one page (the details read for
 * that page only). `alongside` runs beside the details' read (the screen's audit event).
 */
export async function buildWorklist(em: EntityManager, actor: Actor, raw: unknown, alongside?: (shown: WorklistShown) => Promise<unknown>): Promise<WorklistReport> {
  const q = parseInput(WorklistQuery, raw ?? {});
  const { s, ordered, counts, completion, detailOf } = await orderedWorklist(em, actor, q);
  const pageSize = q.pageSize;
  const page = Math.min(q.page, Math.max(1, Math.ceil(ordered.length / pageSize)));
  const shown = ordered.slice((page - 1) * pageSize, page * pageSize);
  const seesPatients = can(actor.roles, 'patient.read');
  const decides = can(actor.roles, 'outcomes.decide');
  const details = new Map<string, DetailRow & PageColumns>();
  const read = async () => {
    if (!shown.length) return;
    const { sql, bindings } = detailQuery(actor.practiceId, detailOf(shown), { page: true, patients: seesPatients });
    for (const d of (await knexOf(em).raw(sql, bindings)).rows as (DetailRow & PageColumns)[]) details.set(d.id, d);
  };
  await Promise.all([read(), alongside?.({ filter: s.filter, cases: ordered.length, page, rows: shown.length })]);
  const rows = shown.map((e): WorklistRow => {
    const d = details.get(e.caseId)!;
    return {
      caseId: e.caseId,
      tooth: formatTooth(d.tooth, 'fdi'),
      kind: d.kind,
      kindLabel: CASE_KIND_LABELS[d.kind],
      patient: seesPatients ? { id: d.patient_id, name: displayName({ givenName: d.given_name!, familyName: d.family_name! }), registryNumber: d.registry_number! } : null,
      clinician: { id: e.operatorId, name: d.operator_name },
      completionDate: completion.get(e.caseId)!,
      yearsSinceCompletion: yearsOf(e.daysSinceCompletion),
      reason: e.reason,
      reasonLabel: WORKLIST_REASON_LABELS[e.reason],
      outcome: e.outcome,
      outcomeLabel: OUTCOME_LABELS[e.outcome],
      latestReviewDate: e.latestReviewDate,
      symptomatic: e.symptomatic,
      noOpenVisit: e.noOpenVisit,
      urgency: e.urgency,
      urgencyLabel: URGENCY_LABELS[e.urgency],
      decision: decisionOf(d, e.latestReviewDate, s.timeZone),
      decisions: d.decisions,
      laterCase: laterCaseOf(d),
      canDecide: decides && e.operatorId === actor.userId,
    };
  });
  return { filter: s.filter, own: s.own, asOf: s.asOf, clinicians: s.clinicians, today: s.today, rows, total: ordered.length, counts, page, pageSize };
}

/** The worklist for the actor's filter (a clinician: their own cases), in urgency order. Audited. */
export async function outcomesWorklist(em: EntityManager, actor: Actor, raw: unknown): Promise<WorklistReport> {
  // recorded beside the reading of the page's details
  return buildWorklist(em, actor, raw, ({ filter, ...shown }) => auditRead(em, actor, { action: 'outcomes.worklist_read', detail: { ...filterDetail(filter), ...shown } }));
}

export const WORKLIST_CSV_HEADER = [
  'Urgency',
  'Case',
  'Tooth (FDI)',
  'Kind',
  'Patient',
  'Registry number',
  'Clinician',
  'Completed',
  'Years since completion',
  'Why listed',
  'Latest review',
  'Outcome at the latest review',
  'Signs at the latest review',
  'Next step',
  'Step date',
  'Note',
  'Recorded by',
  'Recorded on',
  'Later case',
] as const;

/** How many rows of the CSV's detail read are fetched at a time. */
const CSV_FETCH_ROWS = 2000;
/** A download whose reader stops reading for this long loses its connection (PostgreSQL ends the idle transaction that holds the cursor). */
const CSV_IDLE_TIMEOUT = '60s';

/**
 * The worklist as CSV, written while its rows are read: the list in urgency order (as the page),
 * then ONE lean query (detailQuery: exactly the CSV's columns, no entities) read through a cursor
 * CSV_FETCH_ROWS rows at a time, each row written through the one CSV writer (lib/csv/write.ts
 * `streamCsv`, formulas neutralised) as it arrives. The download is audited (with the number of
 * rows) before the first chunk; the first rows are fetched before this returns, so a database that
 * does not answer is still an error status, not a cut download. The chunks hold one connection
 * (a read-only transaction with the cursor) until the last is read or the reader goes away
 * (`return()` closes it).
 */
export async function worklistCsvStream(em: EntityManager, actor: Actor, raw: unknown): Promise<{ chunks: AsyncIterableIterator<string>; rows: number }> {
  return openWorklistCsv(em, actor, raw, (filter, cases) => audit(em, actor, { action: 'outcomes.worklist_exported', detail: { ...filterDetail(filter), cases } }));
}

/**
 * worklistCsvStream's steps; `beforeFirst` runs once the cursor is open and before any chunk (the
 * download's audit; the start's warming, lib/services/outcomes-warm.ts, passes none, as it sends
 * nothing to anyone).
 */
export async function openWorklistCsv(
  em: EntityManager,
  actor: Actor,
  raw: unknown,
  beforeFirst: (filter: OutcomeFilter, cases: number) => Promise<unknown>,
): Promise<{ chunks: AsyncIterableIterator<string>; rows: number }> {
  const q = parseInput(OutcomeFilterQuery, raw ?? {});
  const { s, ordered, completion, detailOf } = await orderedWorklist(em, actor, q);
  const seesPatients = can(actor.roles, 'patient.read');
  // The rows come by primary key in the list's order (unnest … with ordinality is known to be in
  // that order, so nested loops need no sort and the first rows come at once). Left alone, the
  // planner hashes the practice's whole case and patient tables and compiles the plan (JIT): about
  // 4x the time at 100,000 cases and 8,000 rows (npm run bench -- outcomes).
  const cursor = await openCursor<DetailRow>(knexOf(em), detailQuery(actor.practiceId, detailOf(ordered), { page: false, patients: seesPatients }), {
    name: 'worklist_csv',
    fetchRows: CSV_FETCH_ROWS,
    idleTimeout: CSV_IDLE_TIMEOUT,
    settings: 'set local jit = off; set local enable_hashjoin = off; set local enable_mergejoin = off',
  });
  try {
    await beforeFirst(s.filter, ordered.length);
  } catch (e) {
    await cursor.close();
    throw e;
  }

  const entryOf = new Map(ordered.map((e) => [e.caseId, e]));
  const line = (d: DetailRow): CsvValue[] => {
    const e = entryOf.get(d.id)!;
    const decision = decisionOf(d, e.latestReviewDate, s.timeZone);
    const later = laterCaseOf(d);
    return [
      URGENCY_LABELS[e.urgency],
      e.caseId,
      formatTooth(d.tooth, 'fdi'),
      CASE_KIND_LABELS[d.kind],
      seesPatients ? displayName({ givenName: d.given_name!, familyName: d.family_name! }) : '',
      seesPatients ? d.registry_number! : '',
      d.operator_name,
      completion.get(e.caseId)!,
      yearsOf(e.daysSinceCompletion),
      WORKLIST_REASON_LABELS[e.reason],
      e.latestReviewDate,
      OUTCOME_LABELS[e.outcome],
      e.symptomatic ? 'yes' : 'no',
      decision ? `${decision.stepLabel}${decision.stands ? '' : ' (recorded before the latest review)'}` : '',
      decision?.date ?? '',
      decision?.note ?? '',
      decision?.decidedBy ?? '',
      decision?.decidedOn ?? '',
      later ? `${later.kindLabel} started ${later.startDate}${later.completionDate ? `, completed ${later.completionDate}` : ', in progress'} (${later.id})` : '',
    ];
  };
  async function* lines(): AsyncGenerator<CsvValue[]> {
    for await (const page of cursor.pages) for (const d of page) yield line(d);
  }
  const csv = streamCsv([...WORKLIST_CSV_HEADER], lines());
  // return() closes the transaction even when no chunk was asked for (a generator not yet started runs no finally)
  const chunks: AsyncIterableIterator<string> = {
    next: () => csv.next(),
    return: async () => {
      await cursor.close();
      return csv.return(undefined);
    },
    [Symbol.asyncIterator]() {
      return this;
    },
  };
  return { chunks, rows: ordered.length };
}

/** The worklist CSV as one text (worklistCsvStream's chunks joined): the tests and the benchmark. */
export async function worklistCsv(em: EntityManager, actor: Actor, raw: unknown): Promise<string> {
  let text = '';
  for await (const chunk of (await worklistCsvStream(em, actor, raw)).chunks) text += chunk;
  return text;
}

// --- recording a next step ---------------------------------------------------------------------------

/** How far ahead a step may be planned. */
export const MAX_DAYS_AHEAD = 1096;

interface RuleRow {
  id: string;
  patient_id: string;
  operator_id: string;
  kind: string;
  completion_date: string | null;
  pai_score: number;
  lesion_diameter_mm: string | number;
  previous_case_id: string | null;
  archived: boolean;
  reviews: Required<ReviewJson>[];
}

/** One case and its later, completed cases, as the worklist rule reads them (current review versions only). */
async function readForRule(em: EntityManager, practiceId: string, caseId: string) {
  const rows = (
    await knexOf(em).raw(
      `select c.id, c.patient_id, c.operator_id, c.kind, c.completion_date::text as completion_date, c.pai_score, c.lesion_diameter_mm,
         c.previous_case_id, (c.archived_at is not null or p.archived_at is not null) as archived,
         ${currentReviewsJson(true)} as reviews
       from treatment_case c join patient p on p.id = c.patient_id
       where c.practice_id = ? and (c.id = ? or (c.previous_case_id = ? and c.completion_date is not null and c.archived_at is null))`,
      [practiceId, caseId, caseId],
    )
  ).rows as RuleRow[];
  const self = rows.find((r) => r.id === caseId)!;
  const completedFollowers = new Set(rows.filter((r) => r.id !== caseId && !r.archived).map((r) => r.previous_case_id!));
  return { self, completedFollowers };
}

function asOutcomeCase(r: RuleRow): OutcomeCase {
  return {
    id: r.id,
    patientId: r.patient_id,
    operatorId: r.operator_id,
    kind: r.kind,
    completionDate: r.completion_date!,
    baselinePai: Number(r.pai_score),
    lesionDiameterMm: Number(r.lesion_diameter_mm),
    fillLengthClass: null,
    toothGroup: '',
    toothArch: 'upper',
    previousCaseId: r.previous_case_id,
    openVisit: false,
    reviews: recordedReviews(r.reviews),
  };
}

export interface DecisionResult {
  decision: WorklistDecisionView;
  /** False when the same step was already the current one (nothing new written). */
  created: boolean;
  /** The later case of the tooth (retreatment, surgery), and whether this request created it. */
  linkedCase: { id: string; created: boolean } | null;
  /** For a watch: the recall visit added, or why none was. */
  visit: { created: true; id: string; dueDate: CalendarDate; milestone: number } | { created: false; message: string } | null;
}

const fieldError = (field: string, message: string): never => {
  throw new ValidationError('Some fields need attention.', { [field]: [message] });
};

/**
 * Records the next step for a case on the worklist (see the top of this file for who may). The
 * date: not before the latest review, at most three years ahead; a re-review after today. A new
 * row replaces the current one (history kept); the same step, date and note again writes nothing.
 * Retreat and apical surgery: the tooth's later case — created here, in progress (start date the
 * planned date, or today when that is ahead: a case cannot start in the future), linked by
 * previousCase, with the clinician's apical diagnosis and the latest review's PAI and lesion; when
 * the tooth already has a later case, that one is linked and none is created. Watch: a planned
 * recall visit at the date when the visit rules allow (lib/outcomes/worklist planReReviewVisit).
 */
export async function recordDecision(em: EntityManager, actor: Actor, caseId: string, raw: unknown): Promise<DecisionResult> {
  assertCan(actor, 'outcomes.decide');
  const c = await findCase(em, actor, caseId);
  const input = parseInput(DecisionInput, raw ?? {});
  if (c.operator.id !== actor.userId) {
    throw new ForbiddenError('The next step is recorded by the clinician who treated the tooth. To take the case over, make yourself its clinician on the case form first.');
  }
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  return em.transactional(async (tx) => {
    // One decision at a time per case: the case row is the lock (a double click, two tabs).
    await knexOf(tx).raw('select id from treatment_case where id = ? for update', [c.id]);
    const { self, completedFollowers } = await readForRule(tx, actor.practiceId, c.id);
    const entry: WorklistEntry | null =
      self.completion_date && !self.archived ? worklistEntry(asOutcomeCase(self), today, settings.minObservationDays, completedFollowers) : null;
    if (!entry) throw new ConflictError('This case is not on the non-healing worklist (no disease at its latest review, nor healing or uncertain past four years): nothing was recorded.');
    if (input.date < entry.latestReviewDate) fieldError('date', `The date is before the latest review (${entry.latestReviewDate}).`);
    if (input.date > addDaysTo(today, MAX_DAYS_AHEAD)) fieldError('date', 'The date is more than three years ahead.');
    if (input.step === 'watch' && input.date <= today) fieldError('date', 'A re-review is planned ahead: choose a date after today.');

    const current = await tx.findOne(CaseDecisionSchema, { case: c.id }, { orderBy: { createdAt: 'desc' } });
    const note = input.note ?? null;
    if (current && current.step === input.step && current.date === input.date && current.note === note && current.decidedBy.id === actor.userId && current.reviewDate === entry.latestReviewDate) {
      return { decision: await viewOf(tx, current, entry.latestReviewDate, settings.timeZone), created: false, linkedCase: current.linkedCase ? { id: current.linkedCase.id, created: false } : null, visit: null };
    }

    let linkedCase: DecisionResult['linkedCase'] = null;
    const kind = CASE_KIND_OF_STEP[input.step];
    if (kind) {
      const later = await tx.findOne(TreatmentCaseSchema, { previousCase: c.id, practice: actor.practiceId }, { fields: ['id', 'archivedAt'] });
      if (later?.archivedAt) throw new ConflictError('The tooth’s later case is archived: restore it on its page, or record another step.');
      if (later) linkedCase = { id: later.id, created: false };
      else {
        const latest = self.reviews.filter((r) => r.d === entry.latestReviewDate && r.s === 'present').at(-1);
        const measured = latest && latest.p !== null && latest.l !== null;
        try {
          const created = await createCase(tx, actor, {
            patientId: self.patient_id,
            tooth: c.tooth,
            kind,
            operatorId: actor.userId,
            referrerId: c.referrer?.id ?? '',
            previousCaseId: c.id,
            startDate: input.date < today ? input.date : today,
            pulpalDiagnosis: 'previously_treated',
            apicalDiagnosis: input.apicalDiagnosis,
            // PAI and lesion as a pair from one record: the latest review when it has both, else the case's own.
            paiScore: measured ? latest.p : Number(self.pai_score),
            lesionDiameterMm: measured ? Number(latest.l) : Number(self.lesion_diameter_mm),
          });
          linkedCase = { id: created.id, created: true };
        } catch (e) {
          if (!(e instanceof ValidationError)) throw e;
          const why = Object.values(e.fieldErrors ?? {}).flat()[0] ?? e.message;
          throw new ConflictError(`The new case of the tooth could not be created: ${why} Nothing was recorded.`);
        }
      }
    }

    let visit: DecisionResult['visit'] = null;
    let visitId: string | null = null;
    if (input.step === 'watch') {
      const visits = await loadVisits(tx, c.id);
      const plan = planReReviewVisit(visits, self.completion_date!, input.date, (m) => settings.recallPolicy.milestones.find((x) => x.months === m) ?? defaultWindow(m));
      if (plan.create) {
        const v = tx.create(RecallVisitSchema, { practice: actor.practiceId, case: c.id, milestone: plan.milestone, dueDate: plan.dueDate, windowStart: plan.windowStart, windowEnd: plan.windowEnd, status: 'planned' });
        visitId = v.id;
        visit = { created: true, id: v.id, dueDate: plan.dueDate, milestone: plan.milestone };
      } else visit = { created: false, message: plan.message };
    }

    const d = tx.create(CaseDecisionSchema, {
      practice: actor.practiceId,
      case: c.id,
      step: input.step,
      date: input.date,
      note,
      reviewDate: entry.latestReviewDate,
      linkedCase: linkedCase?.id ?? null,
      visit: visitId,
      replaces: current?.id ?? null,
      decidedBy: actor.userId,
    });
    await tx.flush();
    await audit(tx, actor, {
      action: 'outcomes.decision_recorded',
      entityType: 'case',
      entityId: c.id,
      detail: { step: input.step, date: input.date, decisionId: d.id, ...(current ? { replaces: current.id } : {}), ...(linkedCase ? { linkedCaseId: linkedCase.id, linkedCaseCreated: linkedCase.created } : {}), ...(visitId ? { visitId } : {}) },
    });
    return { decision: await viewOf(tx, d, entry.latestReviewDate, settings.timeZone), created: true, linkedCase, visit };
  });
}

async function viewOf(em: EntityManager, d: CaseDecision, latestReviewDate: CalendarDate, timeZone: string): Promise<WorklistDecisionView> {
  const by = (await knexOf(em)('app_user').where('id', d.decidedBy.id).first('name', 'email')) as { name: string | null; email: string };
  return decisionView(
    { id: d.id, step: d.step, date: d.date, note: d.note ?? null, createdAt: d.createdAt.toISOString(), linkedCaseId: d.linkedCase?.id ?? null, visitId: d.visit?.id ?? null, by: by.name ?? by.email },
    latestReviewDate,
    timeZone,
  );
}

export interface DecisionHistoryItem extends DecisionBase {
  reviewDate: CalendarDate;
  /** The step a later row replaced (false for the current one). */
  replaced: boolean;
}

/** Every step recorded for a case, newest first. The lead: any case of the practice; a clinician: their own. Audited. */
export async function caseDecisions(em: EntityManager, actor: Actor, caseId: string): Promise<DecisionHistoryItem[]> {
  assertCan(actor, 'outcomes.read');
  const c = await findCase(em, actor, caseId);
  if (!seesWholePractice(actor) && c.operator.id !== actor.userId) throw new ForbiddenError('A clinician sees the worklist of the cases they treated.');
  const rows = (await knexOf(em)('case_decision as d')
    .join('app_user as u', 'u.id', 'd.decided_by_id')
    .where({ 'd.case_id': c.id, 'd.practice_id': actor.practiceId })
    .orderBy([{ column: 'd.created_at', order: 'desc' }, { column: 'd.id', order: 'desc' }])
    .select(
      'd.id',
      'd.step',
      knexOf(em).raw('d.date::text as date'),
      'd.note',
      'd.created_at',
      knexOf(em).raw('d.review_date::text as review_date'),
      'd.linked_case_id',
      'd.visit_id',
      knexOf(em).raw('coalesce(u.name, u.email) as by'),
      knexOf(em).raw('exists (select 1 from case_decision n where n.replaces_id = d.id) as replaced'),
    )) as { id: string; step: NextStep; date: string; note: string | null; created_at: Date; review_date: string; linked_case_id: string | null; visit_id: string | null; by: string; replaced: boolean }[];
  await auditRead(em, actor, { action: 'outcomes.decisions_read', entityType: 'case', entityId: c.id, detail: { decisions: rows.length } });
  return rows.map((r) => ({
    id: r.id,
    step: r.step,
    stepLabel: NEXT_STEP_LABELS[r.step],
    date: r.date,
    note: r.note,
    decidedBy: r.by,
    decidedAt: new Date(r.created_at).toISOString(),
    reviewDate: r.review_date,
    linkedCaseId: r.linked_case_id,
    visitId: r.visit_id,
    replaced: r.replaced,
  }));
}

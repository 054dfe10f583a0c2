import 'server-only';
import { z } from 'zod';
import { text } from '@/lib/registry/fields';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Knex } from '@mikro-orm/knex';
import { assertCan, type Actor } from '@/lib/auth/actor';
import {
  AWAITING_REPLY_STATUSES,
  CONTACT_STATUSES,
  FINAL_VISIT_STATUSES,
  MAX_REMINDER_ROUND,
  MISSED_REASONS,
  MISSED_REASON_LABELS,
  MISSED_STATUSES,
  NOT_FINAL_VISIT_STATUSES,
  REMINDER_STEP_LABELS,
  VISIT_STATUS_LABELS,
  needsContact,
  nextStepNow,
  statusSql,
  quietDelayMs,
  type ReminderStep,
  type SentStep,
  type VisitStatus,
} from '@/lib/recall';
import { addDaysTo, daysInMonth } from '@/lib/registry/calendar-date';
import { Paging } from '@/lib/schemas/paging';
import { DESK_QUEUES, type DeskQueue } from '@/lib/recall/desk-address';
import { afterDeskAction, keptDeskCounts, type DeskCounts } from './desk-counts';
import { formatTooth, toothNotationLabel } from '@/lib/teeth';
import type { ReminderStatus } from '@/entities';
import { audit, auditRead } from './audit';
import { ConflictError } from './errors';
import { parseInput } from './parse';
import {
  activeVisits,
  iso,
  logContact,
  recallSettings,
  setVisitStatus,
  visitLabel,
  visitsOfPractice,
  VisitIds,
  type DeskVisit,
  type RecallSettings,
} from './recall-common';
import { EMAIL_ADDRESS_SQL, EMAIL_CONSENT_SQL, enqueueOutbox, insertOutboxRows, reminderProducer, retryFailedReminder, type OutboxEntry } from './recall-outbox';
import { isUuid } from '@/lib/uuid';
import { SortDir, countOf, displayName, knexOf, pageFromOneRead, pageOffset, todayIn, type Page } from './registry-common';
import { refreshNextVisit } from './visits';

/**
 * The recall desk: the coordinator's work queues, their rows and the bulk actions.
 *
 * The queues (T = today on the practice's calendar; archived patients and cases are left out).
 * A visit may sit in more than one queue; each count is the number of visits in that queue.
 *
 *   due_soon         still to arrange — planned or invited — and due within the next 30 days:
 *                    T ≤ due date ≤ T + 30
 *   overdue          nobody has a time for it: still to arrange (planned or invited), no booked
 *                    date and no proposed time still ahead, with the due date passed (due date < T)
 *                    but the window still open; when the window ends the scan marks it missed.
 *                    Confirmed (booked) visits are not overdue
 *   call             to phone: still to arrange (planned or invited), due for an invitation (due
 *                    date ≤ T + the policy's invitation weeks), window open, and the patient agreed
 *                    to recall contact but cannot be e-mailed (another channel, or no address):
 *                    no reminder goes to them, so the coordinator calls (printable at /desk/calls)
 *   awaiting_reply   invited, at least one reminder sent, and no patient reply since the latest
 *                    reminder was sent
 *   replied          not final (not attended, cancelled or closed), and the latest contact-log entry
 *                    is the patient's (their reply, or the status change it made): nobody at the
 *                    practice has acted on the answer yet. A call note, a booking, a status change
 *                    by the desk or a new message takes the visit out of this queue
 *   delivery_failed  a reminder could not be delivered after its last attempt (the visit's
 *                    deliveryFailedAt), and the visit is not final; a later delivered message or
 *                    any desk action on the visit clears it
 *   missed           missed: the window ended without an attendance on record (not yet closed as
 *                    lost to follow-up)
 *   this_month       a view, not a work queue: every visit due this calendar month, whatever its status
 *
 * Every queue and its count can be narrowed to one clinician's cases (the case's operator).
 */

export const DESK_QUEUE_INFO: Record<DeskQueue, { label: string; definition: string }> = {
  due_soon: { label: 'Due in the next 30 days', definition: 'Planned or invited, due between today and 30 days from now.' },
  overdue: { label: 'Overdue', definition: 'Due date passed, window still open, and nobody has a time for it (not booked, no proposed time ahead).' },
  call: {
    label: 'To call',
    definition: 'Due for an invitation, agreed to recall contact but cannot be e-mailed (phone or post, or no address): no reminder goes out, so phone them.',
  },
  awaiting_reply: { label: 'Awaiting reply', definition: 'Invited, a reminder sent, no reply since the latest one.' },
  replied: { label: 'Replied', definition: 'The patient answered and nobody has acted on the answer yet.' },
  delivery_failed: { label: 'Delivery failed', definition: 'A reminder could not be delivered after every attempt: call the patient.' },
  missed: { label: 'Missed', definition: 'The window ended without an attendance on record.' },
  this_month: { label: 'Due this month', definition: 'Every visit due this calendar month, whatever its status.' },
};

const FINAL = statusSql(FINAL_VISIT_STATUSES);
/**
 * The visits of the practice whose latest contact log entry (by time, then id) is the patient's. An
 * uncorrelated subquery, so PostgreSQL runs it once and probes a hash per visit (a subquery per visit
 * ran ~200,000 times for the desk's counts at 100,000 cases: `npm run bench -- load`).
 */
const REPLIED_VISITS = `(select e.visit_id from contact_log_entry e where e.practice_id = ? and e.by = 'patient'
  and not exists (select 1 from contact_log_entry l where l.visit_id = e.visit_id and (l.at, l.id) > (e.at, e.id)))`;
/** The visits of the practice with a reminder sent and no reply since it (uncorrelated, as REPLIED_VISITS). */
const AWAITING_REPLY_VISITS = `(select r.visit_id from reminder r where r.practice_id = ? and r.status = 'sent'
  and not exists (select 1 from contact_log_entry e where e.visit_id = r.visit_id and e.kind = 'reply' and e.at >= r.sent_at))`;
/**
 * Every status some queue other than "this month" asks for (the lists the conditions below use).
 * Each such queue's condition implies one of these statuses, so the counts and rows may add
 * `v.status in QUEUED` without changing any figure; with it PostgreSQL reads them index-only from
 * recall_visit_desk_index (whose predicate is this list: keep them equal, or the index goes unused).
 */
export const QUEUED_STATUSES: readonly VisitStatus[] = [...new Set([...CONTACT_STATUSES, ...AWAITING_REPLY_STATUSES, ...NOT_FINAL_VISIT_STATUSES, ...MISSED_STATUSES])];
const QUEUED_SQL = `v.status in ${statusSql(QUEUED_STATUSES)}`;

/** The first and last day of today's calendar month. */
function thisMonth(today: string): [string, string] {
  const [y, m] = today.split('-').map(Number) as [number, number];
  return [`${today.slice(0, 7)}-01`, `${today.slice(0, 7)}-${String(daysInMonth(y, m)).padStart(2, '0')}`];
}

/**
 * The SQL condition of each queue on the live visits v (activeVisits) and, where `withPatient`, their
 * patient p (only "to call" reads the patient).
 */
function queueCondition(
  queue: DeskQueue,
  practiceId: string,
  s: Pick<RecallSettings, 'today' | 'reminderPolicy'>,
  now: Date = new Date(),
): { sql: string; bindings: unknown[]; withPatient?: true } {
  const today = s.today;
  switch (queue) {
    case 'due_soon':
      return { sql: `v.status = any(?) and v.due_date between ? and ?`, bindings: [CONTACT_STATUSES, today, addDaysTo(today, 30)] };
    case 'overdue':
      return {
        sql: `v.status = any(?) and v.due_date < ? and v.booked_date is null and (v.proposed_start is null or v.proposed_start <= ?)`,
        bindings: [CONTACT_STATUSES, today, now],
      };
    case 'call':
      // Agreed to recall contact, but not by e-mail (not EMAIL_CONSENT_SQL: the case and patient of a
      // live visit are not archived). Written as patient_phone_recall_index's predicate, which serves it.
      return {
        sql: `v.status = any(?) and p.recall_contact and not ${EMAIL_ADDRESS_SQL} and v.due_date <= ? and v.window_end >= ?`,
        bindings: [CONTACT_STATUSES, addDaysTo(today, 7 * s.reminderPolicy.invitationWeeksBefore), today],
        withPatient: true,
      };
    case 'this_month':
      return { sql: `v.due_date between ? and ?`, bindings: thisMonth(today) };
    case 'awaiting_reply':
      return {
        sql: `v.status in ${statusSql(AWAITING_REPLY_STATUSES)} and v.id in ${AWAITING_REPLY_VISITS}`,
        bindings: [practiceId],
      };
    case 'replied':
      return { sql: `v.status not in ${FINAL} and v.id in ${REPLIED_VISITS}`, bindings: [practiceId] };
    case 'delivery_failed':
      return { sql: `v.delivery_failed_at is not null and v.status not in ${FINAL}`, bindings: [] };
    case 'missed':
      return { sql: `v.status in ${statusSql(MISSED_STATUSES)}`, bindings: [] };
  }
}

/**
 * The live visits in a queue (activeVisits): its condition, and a queued status, which every queue
 * but "this month" implies and which lets recall_visit_desk_index serve it; optionally one
 * clinician's. The patient (p) is joined when the queue reads it or `withPatient` (a sort by name).
 */
function queueVisits(knex: Knex, s: RecallSettings, queue: DeskQueue, clinician?: string, withPatient = false): Knex.QueryBuilder {
  const c = queueCondition(queue, s.practiceId, s);
  const b = activeVisits(knex, s.practiceId, { withPatient: withPatient || c.withPatient === true }).whereRaw(c.sql, c.bindings as Knex.RawBinding[]);
  if (queue !== 'this_month') b.whereRaw(QUEUED_SQL);
  return clinician ? b.where('v.operator_id', clinician) : b;
}

// --- reads ----------------------------------------------------------------------------------------

export interface DeskQueueCount {
  key: DeskQueue;
  label: string;
  definition: string;
  count: number;
}

export interface DeskQueues {
  today: string;
  /** The clinician the counts are narrowed to, if any. */
  clinician: string | null;
  queues: DeskQueueCount[];
}

/** One clinician's cases only (the case's operator); left out or empty, everyone's. */
const ClinicianFilter = z.preprocess(
  (v) => (v === '' ? undefined : v),
  z.string().trim().refine(isUuid, 'clinician is a clinician’s id.').optional(),
);
export const DeskQueuesQuery = z.object({ clinician: ClinicianFilter });

/**
 * The desk's queues and views with their counts, optionally for one clinician's cases. The counts are
 * kept for `o.maxAgeMs` (default DESK_COUNTS_MAX_AGE_MS; lib/services/desk-counts.ts).
 */
export async function deskQueues(em: EntityManager, actor: Actor, raw: unknown = {}, o: { maxAgeMs?: number } = {}): Promise<DeskQueues> {
  assertCan(actor, 'recall.manage');
  const q = parseInput(DeskQueuesQuery, raw);
  const s = await recallSettings(em, actor.practiceId);
  const knex = knexOf(em);
  // One statement, a count per queue: each reads only its own visits from the desk index or, for
  // "this month", the due-date index; no other table but the patient for "to call". Kept a few
  // seconds (lib/services/desk-counts.ts).
  const [counts] = await Promise.all([
    keptDeskCounts(
      actor.practiceId,
      `${s.today}|${q.clinician ?? ''}`,
      async () => ((await knex.first(Object.fromEntries(DESK_QUEUES.map((key) => [key, queueVisits(knex, s, key, q.clinician).count('*')])))) as DeskCounts | undefined) ?? {},
      o.maxAgeMs,
    ),
    // recorded beside the counting (it names no figure)
    auditRead(em, actor, { action: 'recall.queues_read', ...(q.clinician ? { detail: { clinician: q.clinician } } : {}) }),
  ]);
  return {
    today: s.today,
    clinician: q.clinician ?? null,
    queues: DESK_QUEUES.map((key) => ({ key, ...DESK_QUEUE_INFO[key], count: Number(counts[key] ?? 0) })),
  };
}

export const DeskRowsQuery = Paging.extend({
  queue: z.enum(DESK_QUEUES, { error: `queue is one of ${DESK_QUEUES.join(', ')}.` }),
  clinician: ClinicianFilter,
  sort: z.enum(['dueDate', 'patient', 'lastContact'], { error: 'sort is dueDate, patient or lastContact.' }).default('dueDate'),
  dir: SortDir('asc'),
});
export type DeskRowsQuery = z.input<typeof DeskRowsQuery>;

export interface DeskRow {
  visitId: string;
  caseId: string;
  patient: { id: string; name: string; registryNumber: string; phone: string | null; canEmail: boolean; channel: string; recallContact: boolean };
  /** The case's clinician (operator). */
  clinician: string | null;
  /** The tooth in the practice's notation. */
  tooth: string;
  toothFdi: number;
  milestone: number;
  dueDate: string;
  windowStart: string;
  windowEnd: string;
  status: VisitStatus;
  statusLabel: string;
  bookedDate: string | null;
  /** A proposed appointment time (ISO), carried by the next reminder as a calendar file. */
  proposedStart: string | null;
  deliveryFailed: boolean;
  lastContact: { at: string; kind: string; by: string; answer: string | null; note: string | null } | null;
  reminders: { step: ReminderStep; stepLabel: string; status: ReminderStatus; sentAt: string | null }[];
  /** What "send now" would send (lib/recall nextStepNow), or null. */
  nextStep: ReminderStep | null;
}

export interface DeskRowsPage extends Page<DeskRow> {
  queue: DeskQueue;
  today: string;
  toothLabel: string;
}

const SORTS = {
  dueDate: ['v.due_date', 'v.id'],
  patient: ['p.family_name', 'p.given_name', 'v.due_date', 'v.id'],
  lastContact: ['last_contact_at', 'v.id'],
} as const;

/** One queue's rows, paged. Audited as a read of the patients' records. */
export async function listDeskRows(em: EntityManager, actor: Actor, raw: unknown): Promise<DeskRowsPage> {
  assertCan(actor, 'recall.manage');
  const q = parseInput(DeskRowsQuery, raw);
  const s = await recallSettings(em, actor.practiceId);
  const knex = knexOf(em);
  const base = (withPatient = false) => queueVisits(knex, s, q.queue, q.clinician, withPatient);
  const lastContact = knex.raw(
    `(select max(e.at) from contact_log_entry e where e.visit_id = v.id and e.kind in ('message_sent', 'reply', 'call', 'appointment')) as last_contact_at`,
  );
  let ids: string[];
  let total: number;
  if (q.sort === 'patient') {
    // By name: the page walks the patients in name order (patient_practice_family_name_index) and
    // each one's queued visits (recall_visit_patient_queued_index), or joins and sorts a small queue,
    // as PostgreSQL judges; the count reads the desk index alone. Read once together, a large queue
    // (tens of thousands of missed visits) was joined to its patients whole for every page.
    const page = base(true)
      .where('p.practice_id', s.practiceId)
      .select('v.id')
      .orderBy(SORTS.patient.map((column) => ({ column, order: q.dir })))
      .limit(q.pageSize)
      .offset(pageOffset(q)) as Promise<{ id: string }[]>;
    const [rows, n] = await Promise.all([page, countOf(base())]);
    [ids, total] = [rows.map((r) => r.id), n];
  } else {
    // The queue's visits read once, then counted and sorted for the page (pageFromOneRead). The last
    // contact, a subquery per visit, is read only when the page is sorted by it.
    const sortColumns = SORTS[q.sort].map((c) => c.split('.').pop()!);
    const queue = base().select('v.id', 'v.due_date', ...(q.sort === 'lastContact' ? [lastContact] : []));
    const order = sortColumns.map((column) => ({ column, order: q.dir, nulls: q.dir === 'asc' ? ('first' as const) : ('last' as const) }));
    ({ ids, total } = await pageFromOneRead(knex, queue, order, q, () => countOf(base())));
  }
  // The page's visits are recorded beside the reading of their rows.
  const [rows] = await Promise.all([
    deskRowsByIds(em, s, ids),
    auditRead(em, actor, {
      action: 'recall.rows_read',
      detail: { queue: q.queue, page: q.page, ...(q.clinician ? { clinician: q.clinician } : {}), visitIds: ids },
    }),
  ]);
  return {
    rows,
    total,
    page: q.page,
    pageSize: q.pageSize,
    queue: q.queue,
    today: s.today,
    toothLabel: toothNotationLabel(s.toothNotation),
  };
}

/** Desk rows for visit ids, in that order (no permission check, no audit). */
export async function deskRowsByIds(em: EntityManager, s: RecallSettings, ids: readonly string[]): Promise<DeskRow[]> {
  if (!ids.length) return [];
  const knex = knexOf(em);
  const [details, history, last] = await Promise.all([
    knex('recall_visit as v')
      .join('treatment_case as c', 'c.id', 'v.case_id')
      .join('patient as p', 'p.id', 'c.patient_id')
      .leftJoin('app_user as u', 'u.id', 'c.operator_id')
      .whereIn('v.id', ids)
      .select(
        'v.id',
        'v.case_id',
        'v.milestone',
        'v.due_date',
        'v.window_start',
        'v.window_end',
        'v.status',
        'v.booked_date',
        'v.proposed_start',
        'v.delivery_failed_at',
        'v.reminder_round',
        'c.tooth',
        'u.name as clinician_name',
        'u.email as clinician_email',
        'p.id as patient_id',
        'p.given_name',
        'p.family_name',
        'p.registry_number',
        'p.phone',
        'p.recall_contact',
        'p.recall_channel',
        knex.raw(`${EMAIL_CONSENT_SQL} as consent`),
      ) as Promise<Record<string, unknown>[]>,
    knex('reminder').whereIn('visit_id', ids).orderBy('queued_at').select('visit_id', 'step', 'round', 'status', 'sent_at', 'queued_on', 'sent_on') as Promise<
      { visit_id: string; step: ReminderStep; round: number; status: ReminderStatus; sent_at: string | null; queued_on: string; sent_on: string | null }[]
    >,
    knex
      .select('*')
      .from(
        knex.raw(
          `(select distinct on (e.visit_id) e.visit_id, e.at, e.kind, e.by, e.answer, e.note from contact_log_entry e
             where e.visit_id = any(?::uuid[]) and e.kind in ('message_sent', 'reply', 'call', 'appointment')
             order by e.visit_id, e.at desc, e.id desc) as l`,
          [[...ids]],
        ),
      ) as Promise<{ visit_id: string; at: string; kind: string; by: string; answer: string | null; note: string | null }[]>,
  ]);
  const byId = new Map(details.map((d) => [d.id as string, d]));
  const lastOf = new Map(last.map((l) => [l.visit_id, l]));
  return ids.flatMap((id) => {
    const d = byId.get(id);
    if (!d) return [];
    const reminders = history.filter((h) => h.visit_id === id);
    const status = d.status as VisitStatus;
    const l = lastOf.get(id);
    const fdi = Number(d.tooth);
    return [
      {
        visitId: id,
        caseId: d.case_id as string,
        patient: {
          id: d.patient_id as string,
          name: displayName({ givenName: d.given_name as string, familyName: d.family_name as string }),
          registryNumber: d.registry_number as string,
          phone: (d.phone as string | null) ?? null,
          canEmail: Boolean(d.consent),
          channel: d.recall_channel as string,
          recallContact: Boolean(d.recall_contact),
        },
        clinician: (d.clinician_name as string | null) ?? (d.clinician_email as string | null) ?? null,
        tooth: formatTooth(fdi, s.toothNotation),
        toothFdi: fdi,
        milestone: Number(d.milestone),
        dueDate: d.due_date as string,
        windowStart: d.window_start as string,
        windowEnd: d.window_end as string,
        status,
        statusLabel: VISIT_STATUS_LABELS[status],
        bookedDate: (d.booked_date as string | null) ?? null,
        proposedStart: iso(d.proposed_start as string | null),
        deliveryFailed: d.delivery_failed_at !== null,
        lastContact: l ? { at: iso(l.at)!, kind: l.kind, by: l.by, answer: l.answer, note: l.note } : null,
        reminders: reminders.map((r) => ({ step: r.step, stepLabel: REMINDER_STEP_LABELS[r.step], status: r.status, sentAt: iso(r.sent_at) })),
        nextStep: nextStepNow(
          { id, status, dueDate: d.due_date as string, windowEnd: d.window_end as string, recallContactConsent: Boolean(d.consent) },
          reminders.filter((r) => r.round === Number(d.reminder_round)).map((r) => ({ step: r.step, on: r.sent_on ?? r.queued_on })),
          s.reminderPolicy,
          s.today,
        ),
      } satisfies DeskRow,
    ];
  });
}

// --- actions --------------------------------------------------------------------------------------

export interface ActionResult {
  visitId: string;
  /** Who and which visit, for each line of the result ("Ashdown, Wren — 12-month visit"). */
  visit: string;
  ok: boolean;
  /** queued | retrying | proposed | booked | marked | refused */
  outcome: string;
  step?: ReminderStep;
  message: string;
}

export interface ActionResponse {
  results: ActionResult[];
  /** True when Redis did not answer: the reminders are saved and go out with the next scan. */
  deferred?: boolean;
}

export const SendNowInput = z.object({ visitIds: VisitIds });

/** "Send now" adds nothing for a visit whose last reminder went out less than this long ago. */
const RECENT_MS = 15 * 60_000;

/** Why "send now" has nothing to send for a visit. */
function nothingToSend(v: DeskVisit, today: string): string {
  if (!v.consent) return 'The patient has not agreed to recall contact by e-mail (or no address is on file). Call instead: the visit is in the “To call” queue.';
  if (!needsContact(v.status)) return `The visit is ${VISIT_STATUS_LABELS[v.status].toLowerCase()}: no invitation is needed.`;
  if (v.window_end < today) return 'The visit’s window has ended.';
  return 'Every reminder step has already been sent for this visit.';
}

/**
 * "Send now" for one visit or a selection: each gets its next reminder step at once (lib/recall
 * nextStepNow: the invitation, else the second invitation, else the last notice), queued the same
 * idempotent way as the scan — outbox row first (unique per visit and step), then the job under
 * its stable id. A visit whose last reminder failed gets that same reminder again. A visit with a
 * reminder still on its way, or sent in the last 15 minutes, gets nothing (a double click sends
 * one message). Unknown ids → 404 and nothing queued; visits with nothing to send are reported,
 * not errors.
 */
export const sendRemindersNow = afterDeskAction(async (em: EntityManager, actor: Actor, raw: unknown): Promise<ActionResponse> => {
  assertCan(actor, 'recall.manage');
  const input = parseInput(SendNowInput, raw);
  const s = await recallSettings(em, actor.practiceId);
  const visits = await visitsOfPractice(em, actor.practiceId, input.visitIds);
  // One read of the visits' outbox rows: their history (for nextStepNow), the failed ones and the busy ones.
  const knex = knexOf(em);
  const reminders = (await knex('reminder')
    .whereIn('visit_id', input.visitIds)
    .select(
      'id',
      'visit_id',
      'step',
      'round',
      'status',
      'queued_on',
      'sent_on',
      knex.raw(`(status in ('queued', 'sending') or sent_at > ?) as busy`, [new Date(Date.now() - RECENT_MS)]),
    )) as { id: string; visit_id: string; step: ReminderStep; round: number; status: ReminderStatus; queued_on: string; sent_on: string | null; busy: boolean | null }[];
  // The rules count only each visit's current round (a time proposed by e-mail starts a new one).
  const roundOf = new Map(visits.map((v) => [v.id, Number(v.reminder_round)]));
  const history = new Map<string, SentStep[]>();
  for (const r of reminders) {
    if (r.round !== roundOf.get(r.visit_id)) continue;
    const list = history.get(r.visit_id) ?? [];
    list.push({ step: r.step, on: r.sent_on ?? r.queued_on });
    history.set(r.visit_id, list);
  }
  const failedRows = reminders.filter((r) => r.status === 'failed' && r.round === roundOf.get(r.visit_id));
  // A double click must not send two steps: nothing new while one is on its way or just went out.
  const busy = new Set(reminders.filter((r) => r.busy).map((r) => r.visit_id));

  const results: ActionResult[] = [];
  const entries: OutboxEntry[] = [];
  const retries: (OutboxEntry & { id: string })[] = [];
  for (const v of visits) {
    const canContact = v.consent && needsContact(v.status) && v.window_end >= s.today;
    if (busy.has(v.id)) {
      results.push({ visitId: v.id, visit: visitLabel(v), ok: false, outcome: 'refused', message: 'A reminder for this visit is on its way or went out a few minutes ago.' });
      continue;
    }
    const failed = failedRows.find((f) => f.visit_id === v.id);
    if (failed && canContact) {
      retries.push({ id: failed.id, practiceId: actor.practiceId, visitId: v.id, step: failed.step, round: failed.round, origin: 'desk', requestedBy: actor.userId, day: s.today });
      continue;
    }
    const step = nextStepNow(
      { id: v.id, status: v.status, dueDate: v.due_date, windowEnd: v.window_end, recallContactConsent: v.consent },
      history.get(v.id) ?? [],
      s.reminderPolicy,
      s.today,
    );
    if (!step) results.push({ visitId: v.id, visit: visitLabel(v), ok: false, outcome: 'refused', message: nothingToSend(v, s.today) });
    else entries.push({ practiceId: actor.practiceId, visitId: v.id, step, round: roundOf.get(v.id)!, origin: 'desk', requestedBy: actor.userId, day: s.today });
  }
  const labelOf = new Map(visits.map((v) => [v.id, visitLabel(v)]));

  const inserted = await insertOutboxRows(em, entries);
  for (const e of entries) {
    const isNew = inserted.some((r) => r.visitId === e.visitId && r.step === e.step);
    results.push({
      visitId: e.visitId,
      visit: labelOf.get(e.visitId)!,
      ok: isNew,
      outcome: isNew ? 'queued' : 'refused',
      step: e.step,
      message: isNew ? `${REMINDER_STEP_LABELS[e.step]} queued.` : `${REMINDER_STEP_LABELS[e.step]} is already queued.`,
    });
  }
  let deferred = false;
  if (inserted.length || retries.length) {
    try {
      const queue = await reminderProducer();
      await enqueueOutbox(queue, inserted, quietDelayMs(s.reminderPolicy.quietHours, new Date(), s.timeZone));
      for (const r of retries) {
        const ok = await retryFailedReminder(em, queue, { ...r, status: 'failed' }, actor.userId);
        results.push({
          visitId: r.visitId,
          visit: labelOf.get(r.visitId)!,
          ok,
          outcome: ok ? 'retrying' : 'refused',
          step: r.step,
          message: ok ? `${REMINDER_STEP_LABELS[r.step]} sent again.` : 'Already being retried.',
        });
      }
    } catch (e) {
      // Redis is not answering: the new rows stay queued in the outbox and the next scan queues them.
      console.error('[recall-desk] could not queue reminders now:', (e as Error).message);
      deferred = true;
      for (const r of retries) {
        results.push({ visitId: r.visitId, visit: labelOf.get(r.visitId)!, ok: false, outcome: 'refused', step: r.step, message: 'The queue is not answering; try again shortly.' });
      }
    }
  }
  const order = new Map(input.visitIds.map((id, i) => [id, i]));
  results.sort((a, b) => order.get(a.visitId)! - order.get(b.visitId)!);
  await audit(em, actor, {
    action: 'recall.send_now',
    detail: { visitIds: input.visitIds, queued: results.filter((r) => r.ok).map((r) => ({ visitId: r.visitId, step: r.step })), deferred },
  });
  return deferred ? { results, deferred } : { results };
});

export const BookInput = z.object({
  visitIds: VisitIds,
  /** The appointment, an ISO 8601 date-time with offset (e.g. 2026-03-03T09:30:00Z). */
  start: z.iso.datetime({ offset: true, error: 'Give the appointment as a date and time, e.g. 2026-03-03T09:30:00Z.' }),
  /** propose: offered to the patient by e-mail (with a calendar file); phone: agreed by phone, the visit is confirmed. */
  mode: z.enum(['propose', 'phone'], { error: 'mode is propose or phone.' }),
  /** With propose: send the proposal now (its own message); without, the next reminder carries it. */
  sendNow: z.boolean().default(false),
  note: z.preprocess((v) => (v === '' ? undefined : v), text({ max: 1000 }).optional()),
});

/**
 * Books a date and time. `propose`: the visit keeps its status and the time is proposed; the
 * patient confirms through the link. With `sendNow` the proposal goes out at once as its own
 * message (step `proposal`, its own wording, with a calendar file) and starts a new round of the
 * reminder steps (lib/recall/reminders.ts): what was sent before no longer counts, a reminder of
 * the old round still waiting is skipped, and the second invitation follows the proposal after the
 * usual reply wait — never "we have not heard from you" minutes after the invitation. Without
 * `sendNow` the next reminder carries the time. Only patients who can be e-mailed get a proposal.
 * `phone`: agreed with the patient by phone — the visit becomes confirmed with that date
 * (allowed from planned, invited, confirmed, missed and declined). Either way a contact-log entry
 * is written and a delivery-failed flag is cleared.
 */
export const bookVisits = afterDeskAction(async (em: EntityManager, actor: Actor, raw: unknown): Promise<ActionResponse> => {
  assertCan(actor, 'recall.manage');
  const input = parseInput(BookInput, raw);
  const start = new Date(input.start);
  const s = await recallSettings(em, actor.practiceId);
  const day = todayIn(s.timeZone, start);
  if (day < s.today) throw new ConflictError('The appointment is in the past.');
  const words = new Intl.DateTimeFormat('en-GB', { timeZone: s.timeZone, dateStyle: 'full', timeStyle: 'short' }).format(start);
  const results: ActionResult[] = [];
  const proposals: OutboxEntry[] = [];
  await em.transactional(async (tx) => {
    const visits = await visitsOfPractice(tx, actor.practiceId, input.visitIds, true);
    const changed: string[] = [];
    for (const v of visits) {
      const base = { practiceId: actor.practiceId, visitId: v.id, by: 'user' as const, userId: actor.userId };
      const visit = visitLabel(v);
      if (input.mode === 'propose') {
        if (!needsContact(v.status)) {
          results.push({ visitId: v.id, visit, ok: false, outcome: 'refused', message: `The visit is ${VISIT_STATUS_LABELS[v.status].toLowerCase()}: book it by phone instead.` });
          continue;
        }
        if (input.sendNow && !v.consent) {
          results.push({ visitId: v.id, visit, ok: false, outcome: 'refused', message: 'The patient cannot be e-mailed: agree a time by phone instead.' });
          continue;
        }
        if (input.sendNow && v.window_end < s.today) {
          results.push({ visitId: v.id, visit, ok: false, outcome: 'refused', message: 'The visit’s window has ended.' });
          continue;
        }
        const round = Math.min(Number(v.reminder_round) + (input.sendNow ? 1 : 0), MAX_REMINDER_ROUND);
        await knexOf(tx)('recall_visit').where({ id: v.id }).update({ proposed_start: start, reminder_round: round, delivery_failed_at: null, updated_at: new Date() });
        await logContact(tx, [{ ...base, kind: 'appointment', note: `Proposed ${words}.${input.note ? ` ${input.note}` : ''}` }]);
        if (input.sendNow) {
          proposals.push({ practiceId: actor.practiceId, visitId: v.id, step: 'proposal', round, origin: 'desk', requestedBy: actor.userId, day: s.today });
        }
        results.push({ visitId: v.id, visit, ok: true, outcome: 'proposed', message: `Proposed ${words}.${input.sendNow ? '' : ' The next reminder will carry it.'}` });
      } else {
        const extra = { booked_date: day, proposed_start: start, delivery_failed_at: null };
        if (v.status === 'confirmed') await knexOf(tx)('recall_visit').where({ id: v.id }).update({ ...extra, updated_at: new Date() });
        else if (!(await setVisitStatus(tx, v, { to: 'confirmed', on: s.today, by: 'user' }, actor.userId, extra)).ok) {
          results.push({ visitId: v.id, visit, ok: false, outcome: 'refused', message: `A visit that is ${VISIT_STATUS_LABELS[v.status].toLowerCase()} cannot be booked.` });
          continue;
        }
        await logContact(tx, [
          { ...base, kind: 'appointment', note: `Booked by phone for ${words}.${input.note ? ` ${input.note}` : ''}` },
          ...(v.status !== 'confirmed' ? [{ ...base, kind: 'status_change' as const, fromStatus: v.status, toStatus: 'confirmed' as const }] : []),
        ]);
        changed.push(v.case_id);
        results.push({ visitId: v.id, visit, ok: true, outcome: 'booked', message: `Booked for ${words}; the visit is confirmed.` });
      }
    }
    // The proposals' outbox rows commit with the new round; their jobs are queued below.
    const inserted = await insertOutboxRows(tx, proposals);
    if (inserted.length !== proposals.length) throw new ConflictError('This time is already being proposed. Nothing was changed.');
    await refreshNextVisit(tx, [...new Set(changed)]);
  });
  await audit(em, actor, {
    action: 'recall.booked',
    detail: { mode: input.mode, start: start.toISOString(), visitIds: results.filter((r) => r.ok).map((r) => r.visitId) },
  });
  let deferred = false;
  if (proposals.length) {
    try {
      await enqueueOutbox(await reminderProducer(), proposals, quietDelayMs(s.reminderPolicy.quietHours, new Date(), s.timeZone));
    } catch (e) {
      // Redis is not answering: the rows stay queued in the outbox and the next scan queues them.
      console.error('[recall-desk] could not queue proposals now:', (e as Error).message);
      deferred = true;
    }
    for (const p of proposals) {
      const mine = results.find((x) => x.visitId === p.visitId);
      if (mine) {
        mine.step = 'proposal';
        mine.message += ' Proposal queued.';
      }
    }
  }
  return deferred ? { results, deferred } : { results };
});

export const MarkInput = z
  .object({
    visitIds: VisitIds,
    status: z.enum(['attended', 'missed'], { error: 'status is attended or missed.' }),
    /** With missed: why (no-show, cancelled late, unreachable). */
    reason: z.enum(MISSED_REASONS, { error: `reason is one of ${MISSED_REASONS.join(', ')}.` }).optional(),
    note: z.preprocess((v) => (v === '' ? undefined : v), text({ max: 1000 }).optional()),
  })
  .refine((v) => v.status !== 'missed' || v.reason !== undefined, {
    path: ['reason'],
    message: 'Say why the visits were missed: no-show, cancelled late or unreachable.',
  });

/**
 * Marks visits attended or missed (missed with a reason), each through lib/recall
 * transitionVisit: along the status table and only once the appointment or window has begun (a
 * visit that may not make the move is reported with the rule's message and left as it is). A
 * status-change entry goes to each contact log; a delivery-failed flag is cleared.
 */
export const markVisits = afterDeskAction(async (em: EntityManager, actor: Actor, raw: unknown): Promise<ActionResponse> => {
  assertCan(actor, 'recall.manage');
  const input = parseInput(MarkInput, raw);
  const s = await recallSettings(em, actor.practiceId);
  const results: ActionResult[] = [];
  await em.transactional(async (tx) => {
    const visits = await visitsOfPractice(tx, actor.practiceId, input.visitIds, true);
    const cases: string[] = [];
    for (const v of visits) {
      const visit = visitLabel(v);
      if (v.status === input.status) {
        results.push({ visitId: v.id, visit, ok: true, outcome: 'marked', message: `Already ${VISIT_STATUS_LABELS[v.status].toLowerCase()}.` });
        continue;
      }
      const moved = await setVisitStatus(tx, v, { to: input.status, on: s.today, by: 'user', missedReason: input.reason ?? null }, actor.userId, { delivery_failed_at: null });
      if (!moved.ok) {
        results.push({ visitId: v.id, visit, ok: false, outcome: 'refused', message: moved.message });
        continue;
      }
      const why = input.status === 'missed' && input.reason ? MISSED_REASON_LABELS[input.reason] : null;
      await logContact(tx, [
        {
          practiceId: actor.practiceId,
          visitId: v.id,
          kind: 'status_change',
          by: 'user',
          userId: actor.userId,
          fromStatus: v.status,
          toStatus: input.status,
          note: [why, input.note].filter(Boolean).join('. ') || null,
        },
      ]);
      cases.push(v.case_id);
      results.push({ visitId: v.id, visit, ok: true, outcome: 'marked', message: `Marked ${VISIT_STATUS_LABELS[input.status].toLowerCase()}.` });
    }
    await refreshNextVisit(tx, [...new Set(cases)]);
  });
  await audit(em, actor, { action: 'recall.marked', detail: { status: input.status, ...(input.reason ? { reason: input.reason } : {}), visitIds: results.filter((r) => r.ok).map((r) => r.visitId) } });
  return { results };
});

// --- the printable call list ------------------------------------------------------------------------

export interface CallList {
  today: string;
  practiceName: string;
  clinician: string | null;
  toothLabel: string;
  rows: DeskRow[];
  /** More visits than the list shows (CALL_LIST_MAX): narrow by clinician. */
  truncated: boolean;
}

/** The printed list holds at most this many visits. */
export const CALL_LIST_MAX = 500;

/**
 * The "To call" queue as one printable list (the coordinator phones the patients who cannot be
 * e-mailed): every visit in it, most overdue first, optionally one clinician's. Audited as a
 * read of the patients' records.
 */
export async function callList(em: EntityManager, actor: Actor, raw: unknown = {}): Promise<CallList> {
  assertCan(actor, 'recall.manage');
  const q = parseInput(DeskQueuesQuery, raw);
  const s = await recallSettings(em, actor.practiceId);
  const knex = knexOf(em);
  const ids = (await queueVisits(knex, s, 'call', q.clinician).select('v.id').orderBy([{ column: 'v.due_date' }, { column: 'p.family_name' }, { column: 'v.id' }]).limit(CALL_LIST_MAX + 1)) as { id: string }[];
  const rows = await deskRowsByIds(em, s, ids.slice(0, CALL_LIST_MAX).map((r) => r.id));
  await auditRead(em, actor, { action: 'recall.call_list_read', detail: { ...(q.clinician ? { clinician: q.clinician } : {}), visitIds: rows.map((r) => r.visitId) } });
  return {
    today: s.today,
    practiceName: s.practiceName,
    clinician: q.clinician ?? null,
    toothLabel: toothNotationLabel(s.toothNotation),
    rows,
    truncated: ids.length > CALL_LIST_MAX,
  };
}

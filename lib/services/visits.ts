import 'server-only';
import { z } from 'zod';
import type { EntityManager } from '@mikro-orm/postgresql';
import { ContactLogEntrySchema, RecallVisitSchema, ReviewSchema, TreatmentCaseSchema, UserSchema, type RecallVisit, type TreatmentCase } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import {
  MISSED_REASONS,
  MISSED_REASON_LABELS,
  VISIT_STATUSES,
  VISIT_STATUS_LABELS,
  allowedMoves,
  hasStarted,
  isFinalStatus,
  isInWindow,
  isOpenStatus,
  isPastDue,
  transitionVisit,
  undoMissed,
  type MissedReasonValue,
  type TransitionRequest,
  type TransitionVisit,
  type VisitStatus,
  type VisitStatusChanges,
} from '@/lib/recall';
import { calendarDate, text } from '@/lib/registry/fields';
import { audit, auditRead } from './audit';
import { ConflictError, NotFoundError } from './errors';
import { parseInput } from './parse';
import { assertId, findCase, knexOf, practiceSettings, todayIn, type Timestamp } from './registry-common';
import { afterDeskAction } from './desk-counts';

export interface VisitView {
  id: string;
  caseId: string;
  /** Months after completion. */
  milestone: number;
  dueDate: string;
  windowStart: string;
  windowEnd: string;
  status: VisitStatus;
  statusLabel: string;
  /** Statuses this visit may move to now (lib/recall allowedMoves: the table, less attended/missed before it begins). */
  allowedNext: VisitStatus[];
  open: boolean;
  /** The window has ended (by the practice's today). */
  pastDue: boolean;
  inWindow: boolean;
  bookedDate: string | null;
  reinviteNeeded: boolean;
  lostToFollowUp: boolean;
  closedOn: string | null;
  note: string | null;
  statusChangedAt: string;
  reviewIds: string[];
  /** Why it was missed (lib/recall MISSED_REASONS or window_ended), while it is missed. */
  missedReason: MissedReasonValue | null;
  missedReasonLabel: string | null;
  /** A person marked it missed today: "undo" restores the status it had. */
  canUndoMissed: boolean;
  /** Its appointment (or, unbooked, its window) has begun: attended and missed are possible. */
  started: boolean;
  /** Confirmed with its appointment today: the visit of the day. */
  ofTheDay: boolean;
}

export const VisitUpdateSchema = z
  .object({
    status: z.enum(VISIT_STATUSES, { error: `Choose the status: ${VISIT_STATUSES.join(', ')}.` }).optional(),
    /** The appointment date; null or '' clears it. */
    bookedDate: z.preprocess((v) => (v === '' ? null : v), calendarDate('the appointment date').nullable()).optional(),
    note: z.preprocess((v) => (v === '' ? null : v), text({ max: 500 }).nullable()).optional(),
    /** With status 'missed': why (no-show, cancelled late, unreachable). */
    missedReason: z.enum(MISSED_REASONS, { error: `Say why the visit was missed: ${MISSED_REASONS.join(', ')}.` }).optional(),
    /** Undo a "mark missed" made today: the visit returns to the status it had. */
    undoMissed: z.literal(true, { error: 'undoMissed is true or absent.' }).optional(),
  })
  .refine((v) => v.status !== undefined || v.bookedDate !== undefined || v.note !== undefined || v.undoMissed, {
    message: 'Send a status, an appointment date, a note or undoMissed.',
    path: ['status'],
  });
export type VisitUpdate = z.input<typeof VisitUpdateSchema>;

export const CloseAsLostSchema = z.object({
  note: z.preprocess((v) => (v === '' ? undefined : v), text({ max: 500 }).optional()),
});

// --- reads ----------------------------------------------------------------------------------------

/** The recall visits of one case, in milestone order. Audited as a read of the case's record. */
export async function listVisits(em: EntityManager, actor: Actor, caseId: string): Promise<VisitView[]> {
  assertCan(actor, 'patient.read');
  const c = await findCase(em, actor, caseId);
  const [visits, settings] = await Promise.all([loadVisits(em, c.id), practiceSettings(em, actor.practiceId)]);
  await auditRead(em, actor, { action: 'visit.list', entityType: 'case', entityId: c.id });
  return visitViews(em, visits, todayIn(settings.timeZone));
}

// --- changes --------------------------------------------------------------------------------------

/**
 * Changes a visit's status (through lib/recall transitionVisit: along VISIT_TRANSITIONS, attended
 * or missed only once the appointment or window has begun, missed with a reason — a refusal is a
 * 409 saying why), undoes a "mark missed" made today (`undoMissed`), or changes its appointment
 * date or note. Status 'closed' closes it as lost to follow-up (see closeVisitAsLost). Every status
 * change goes to the visit's contact log. Returns the case's visits after the change.
 */
export const updateVisit = afterDeskAction(async (em: EntityManager, actor: Actor, visitId: string, raw: unknown): Promise<VisitView[]> => {
  assertCan(actor, 'recall.manage');
  const visit = await findVisit(em, actor, visitId);
  const input = parseInput(VisitUpdateSchema, raw);
  const from = visit.status as VisitStatus;
  if (input.status === 'closed' && from !== 'closed') {
    return closeVisitAsLost(em, actor, visit.id, { note: input.note ?? undefined });
  }
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  const who = { practiceId: actor.practiceId, userId: actor.userId };
  const changes: Record<string, unknown> = {};
  if (input.bookedDate !== undefined && input.bookedDate !== (visit.bookedDate ?? null)) {
    if (isFinalStatus(from)) {
      throw new ConflictError(`The visit is ${VISIT_STATUS_LABELS[from].toLowerCase()}: its appointment can no longer change.`);
    }
    visit.bookedDate = input.bookedDate;
    changes.bookedDate = true;
  }
  if (input.undoMissed) {
    const result = undoMissed(transitionView(visit), today);
    if (!result.ok) throw new ConflictError(result.message);
    writeStatus(em, visit, result.changes, who, 'user', 'Undone: “missed” was recorded by mistake.');
    changes.status = { from, to: result.changes.status, undo: 'missed' };
  } else if (input.status !== undefined && input.status !== from) {
    changeVisitStatus(em, visit, { to: input.status, on: today, by: 'user', missedReason: input.missedReason ?? null }, who, input.note ?? null);
    changes.status = { from, to: input.status, ...(input.missedReason ? { missedReason: input.missedReason } : {}) };
  }
  if (input.note !== undefined && input.note !== (visit.note ?? null)) {
    visit.note = input.note;
    changes.note = true;
  }
  const visits = await loadVisits(em, visit.case.id);
  setVisitSummary(await em.findOneOrFail(TreatmentCaseSchema, visit.case.id), visits);
  await em.flush();
  if (Object.keys(changes).length) {
    await audit(em, actor, { action: 'visit.updated', entityType: 'visit', entityId: visit.id, detail: { caseId: visit.case.id, ...changes } });
  }
  return visitViews(em, visits, today);
});

/**
 * Closes a visit as lost to follow-up — the practice stops trying — together with the case's
 * later visits that are not final yet (see closeAsLost). Returns the case's visits after the change.
 */
export async function closeVisitAsLost(em: EntityManager, actor: Actor, visitId: string, raw: unknown): Promise<VisitView[]> {
  assertCan(actor, 'recall.manage');
  const visit = await findVisit(em, actor, visitId);
  const input = parseInput(CloseAsLostSchema, raw ?? {});
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  const visits = await loadVisits(em, visit.case.id);
  await closeAsLost(em, actor, { practiceId: actor.practiceId, visitId: visit.id, visits, today, note: input.note ?? null });
  return visitViews(em, visits, today);
}

export interface CloseAsLostInput {
  practiceId: string;
  visitId: string;
  /** The case's visits (loadVisits), locked by the caller when it runs beside other writers. */
  visits: RecallVisit[];
  today: string;
  /** Why: the person's note, or the scan's account of the unanswered attempts. */
  note: string | null;
  /** Added to the audit detail (e.g. the scan's count of unanswered attempts). */
  detail?: Record<string, unknown>;
}

/**
 * The one close-as-lost routine, for the desk, the case page and the recall scan: the visit and
 * the case's later visits that are not final (open, missed or declined) become closed — a
 * patient lost at 12 months is not invited at 24 — each through lib/recall transitionVisit, with
 * its contact-log entry, `lostToFollowUp` and `closedOn`. Attended, cancelled and already closed
 * visits are left as they are. One audit event names every visit closed. `actor` null is the scan.
 * Flushes; returns the ids closed.
 */
export async function closeAsLost(em: EntityManager, actor: Actor | null, input: CloseAsLostInput): Promise<string[]> {
  const visit = input.visits.find((v) => v.id === input.visitId);
  if (!visit) throw new NotFoundError('No such visit.');
  const by = actor ? ('user' as const) : ('system' as const);
  const who = { practiceId: input.practiceId, userId: actor?.userId ?? null };
  const closed: string[] = [];
  for (const v of input.visits) {
    if (v.id !== visit.id && (v.milestone <= visit.milestone || isFinalStatus(v.status as VisitStatus))) continue;
    if (v.status === 'closed') continue;
    const note = v.id === visit.id ? input.note : 'Closed with an earlier visit lost to follow-up.';
    changeVisitStatus(em, v, { to: 'closed', on: input.today, by }, who, note);
    v.lostToFollowUp = true;
    v.closedOn = input.today;
    if (v.id === visit.id && input.note && actor) v.note = input.note.slice(0, 500);
    closed.push(v.id);
  }
  setVisitSummary(await em.findOneOrFail(TreatmentCaseSchema, visit.case.id), input.visits);
  await em.flush();
  if (closed.length) {
    await audit(
      em,
      actor,
      { action: 'visit.closed_lost', entityType: 'visit', entityId: visit.id, detail: { ...(actor ? {} : { by: 'recall-scan' }), caseId: visit.case.id, visitIds: closed, ...input.detail } },
      actor ? undefined : { practiceId: input.practiceId },
    );
  }
  return closed;
}

// --- shared with the case, review and import services ----------------------------------------------

/** The fields of a visit its views read: an entity, or the case page's plain read (readVisitFields). */
export type VisitFields = Pick<
  RecallVisit,
  'id' | 'milestone' | 'dueDate' | 'windowStart' | 'windowEnd' | 'status' | 'bookedDate' | 'reinviteNeeded' | 'lostToFollowUp' | 'closedOn' | 'note' | 'statusChangedAt' | 'missedReason' | 'missedOn' | 'missedFrom'
> & { case: { id: string } };

/** What lib/recall transitionVisit reads of a stored visit. */
export function transitionView(v: VisitFields): TransitionVisit {
  return {
    status: v.status as VisitStatus,
    milestone: v.milestone,
    windowStart: v.windowStart,
    windowEnd: v.windowEnd,
    bookedDate: v.bookedDate ?? null,
    missedReason: (v.missedReason as MissedReasonValue | null) ?? null,
    missedOn: v.missedOn ?? null,
    missedFrom: (v.missedFrom as VisitStatus | null) ?? null,
  };
}

/**
 * Moves a loaded visit through lib/recall transitionVisit — the ORM side of the one rule (the
 * desk's row-locked SQL side is recall-common setVisitStatus) — and appends the status change to
 * its contact log. A refusal is a 409 with the rule's message. The caller flushes.
 */
export function changeVisitStatus(
  em: EntityManager,
  visit: RecallVisit,
  req: TransitionRequest,
  who: { practiceId: string; userId: string | null },
  note: string | null = null,
): void {
  const result = transitionVisit(transitionView(visit), req);
  if (!result.ok) throw new ConflictError(result.message);
  writeStatus(em, visit, result.changes, who, req.by, note);
}

function writeStatus(
  em: EntityManager,
  visit: RecallVisit,
  changes: VisitStatusChanges,
  who: { practiceId: string; userId: string | null },
  by: TransitionRequest['by'],
  note: string | null,
): void {
  const from = visit.status as VisitStatus;
  Object.assign(visit, changes);
  visit.statusChangedAt = new Date();
  visit.statusChangedBy = who.userId ? em.getReference(UserSchema, who.userId, { wrapped: true }) : null;
  const reason = changes.missedReason && by === 'user' ? MISSED_REASON_LABELS[changes.missedReason] : null;
  em.create(ContactLogEntrySchema, {
    practice: who.practiceId,
    visit: visit.id,
    kind: 'status_change',
    by,
    user: who.userId,
    fromStatus: from,
    toStatus: changes.status,
    note: [reason, note].filter(Boolean).join('. ').slice(0, 1000) || null,
  });
}

/** The case's visits, in milestone order. */
export function loadVisits(em: EntityManager, caseId: string): Promise<RecallVisit[]> {
  return em.find(RecallVisitSchema, { case: caseId }, { orderBy: { milestone: 'asc' } });
}

/** A case's visits as their views read them, by milestone: one plain read, no entities (the case page, which changes nothing). */
export async function readVisitFields(em: EntityManager, caseId: string): Promise<VisitFields[]> {
  const knex = knexOf(em);
  const rows = (await knex('recall_visit')
    .where('case_id', caseId)
    .orderBy('milestone')
    .select(
      'id',
      'case_id',
      'milestone',
      knex.raw('due_date::text as due_date'),
      knex.raw('window_start::text as window_start'),
      knex.raw('window_end::text as window_end'),
      'status',
      knex.raw('booked_date::text as booked_date'),
      'reinvite_needed',
      'lost_to_follow_up',
      knex.raw('closed_on::text as closed_on'),
      'note',
      'status_changed_at',
      'missed_reason',
      knex.raw('missed_on::text as missed_on'),
      'missed_from',
    )) as {
    id: string;
    case_id: string;
    milestone: number;
    due_date: string;
    window_start: string;
    window_end: string;
    status: RecallVisit['status'];
    booked_date: string | null;
    reinvite_needed: boolean;
    lost_to_follow_up: boolean;
    closed_on: string | null;
    note: string | null;
    status_changed_at: Timestamp;
    missed_reason: RecallVisit['missedReason'];
    missed_on: string | null;
    missed_from: RecallVisit['missedFrom'];
  }[];
  return rows.map((r) => ({
    id: r.id,
    case: { id: r.case_id },
    milestone: r.milestone,
    dueDate: r.due_date,
    windowStart: r.window_start,
    windowEnd: r.window_end,
    status: r.status,
    bookedDate: r.booked_date,
    reinviteNeeded: r.reinvite_needed,
    lostToFollowUp: r.lost_to_follow_up,
    closedOn: r.closed_on,
    note: r.note,
    statusChangedAt: new Date(r.status_changed_at),
    missedReason: r.missed_reason,
    missedOn: r.missed_on,
    missedFrom: r.missed_from,
  }));
}

/** The earliest open visit of a list (due date and status), or null. */
export function nextVisitOf(visits: readonly Pick<RecallVisit, 'dueDate' | 'status'>[]): { date: string; status: VisitStatus } | null {
  let next: { date: string; status: VisitStatus } | null = null;
  for (const v of visits) {
    if (!isOpenStatus(v.status as VisitStatus)) continue;
    if (!next || v.dueDate < next.date) next = { date: v.dueDate, status: v.status as VisitStatus };
  }
  return next;
}

/**
 * The case's recall summary columns from its visits (see entities/TreatmentCase.ts): the next
 * open visit and the distinct statuses, sorted. The database trigger computes the same.
 */
export function visitSummary(visits: readonly Pick<RecallVisit, 'dueDate' | 'status'>[]) {
  const next = nextVisitOf(visits);
  return {
    nextVisitDate: next?.date ?? null,
    nextVisitStatus: next?.status ?? null,
    visitStatuses: [...new Set(visits.map((v) => v.status as string))].sort(),
  };
}

/** Sets the summary on the entity the service holds, so an answer built from it is current. */
export function setVisitSummary(c: TreatmentCase, visits: readonly Pick<RecallVisit, 'dueDate' | 'status'>[]): void {
  Object.assign(c, visitSummary(visits));
}

/**
 * Recomputes the recall summary of the given cases now (the trigger on recall_visit already does
 * after every statement; this is for callers that want it explicitly). Flush entity changes first.
 */
export async function refreshNextVisit(em: EntityManager, caseIds: readonly string[]): Promise<void> {
  if (caseIds.length === 0) return;
  const db = knexOf(em);
  for (let i = 0; i < caseIds.length; i += 5000) {
    const chunk = caseIds.slice(i, i + 5000);
    await db.raw(`select lamina_case_visit_summary(array[${chunk.map(() => '?').join(', ')}]::uuid[])`, chunk);
  }
}

/**
 * The visits as the pages show them, each with its current reviews (by review date). A caller that
 * has read the case's reviews already (the case page) passes them, and nothing more is read.
 */
export async function visitViews(
  em: EntityManager,
  visits: readonly VisitFields[],
  today: string,
  caseReviews?: readonly { id: string; visitId: string | null; current: boolean }[],
): Promise<VisitView[]> {
  const reviews = caseReviews
    ? caseReviews.filter((r) => r.current && r.visitId).map((r) => ({ id: r.id, visitId: r.visitId }))
    : visits.length
      ? (await em.find(ReviewSchema, { visit: { $in: visits.map((v) => v.id) }, supersededBy: null }, { fields: ['id', 'visit'], orderBy: { reviewDate: 'asc' } })).map((r) => ({ id: r.id, visitId: r.visit?.id ?? null }))
      : [];
  return visits.map((v) => visitView(v, today, reviews.filter((r) => r.visitId === v.id).map((r) => r.id)));
}

export function visitView(v: VisitFields, today: string, reviewIds: string[] = []): VisitView {
  const status = v.status as VisitStatus;
  return {
    id: v.id,
    caseId: v.case.id,
    milestone: v.milestone,
    dueDate: v.dueDate,
    windowStart: v.windowStart,
    windowEnd: v.windowEnd,
    status,
    statusLabel: VISIT_STATUS_LABELS[status],
    allowedNext: allowedMoves(transitionView(v), today),
    open: isOpenStatus(status),
    pastDue: isPastDue(v, today),
    inWindow: isInWindow(v, today),
    bookedDate: v.bookedDate ?? null,
    reinviteNeeded: v.reinviteNeeded,
    lostToFollowUp: v.lostToFollowUp,
    closedOn: v.closedOn ?? null,
    note: v.note ?? null,
    statusChangedAt: v.statusChangedAt.toISOString(),
    reviewIds,
    missedReason: status === 'missed' ? ((v.missedReason as MissedReasonValue | null) ?? null) : null,
    missedReasonLabel: status === 'missed' && v.missedReason ? MISSED_REASON_LABELS[v.missedReason as MissedReasonValue] : null,
    canUndoMissed: undoMissed(transitionView(v), today).ok,
    started: hasStarted(transitionView(v), today),
    ofTheDay: status === 'confirmed' && v.bookedDate === today,
  };
}

async function findVisit(em: EntityManager, actor: Actor, id: string): Promise<RecallVisit> {
  const visit = await em.findOne(RecallVisitSchema, { id: assertId(id, 'visit'), practice: actor.practiceId });
  if (!visit) throw new NotFoundError('No such visit.');
  return visit;
}


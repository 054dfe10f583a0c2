import 'server-only';
import { z } from 'zod';
import type { EntityManager } from '@mikro-orm/postgresql';
import { RecallVisitSchema, ReviewSchema, TreatmentCaseSchema, type RecallVisit, type TreatmentCase } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import {
  VISIT_STATUSES,
  VISIT_STATUS_LABELS,
  VISIT_TRANSITIONS,
  canTransition,
  isFinalStatus,
  isInWindow,
  isOpenStatus,
  isPastDue,
  type VisitStatus,
} from '@/lib/recall';
import { calendarDate, text } from '@/lib/registry/fields';
import { audit } from './audit';
import { ConflictError, NotFoundError } from './errors';
import { parseInput } from './parse';
import { assertId, findCase, knexOf, practiceSettings, todayIn } from './registry-common';

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
  /** Statuses this visit may move to now (lib/recall VISIT_TRANSITIONS). */
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
}

export const VisitUpdateSchema = z
  .object({
    status: z.enum(VISIT_STATUSES, { error: `Choose the status: ${VISIT_STATUSES.join(', ')}.` }).optional(),
    /** The appointment date; null or '' clears it. */
    bookedDate: z.preprocess((v) => (v === '' ? null : v), calendarDate('the appointment date').nullable()).optional(),
    note: z.preprocess((v) => (v === '' ? null : v), text({ max: 500 }).nullable()).optional(),
  })
  .refine((v) => v.status !== undefined || v.bookedDate !== undefined || v.note !== undefined, {
    message: 'Send a status, an appointment date or a note.',
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
  await audit(em, actor, { action: 'visit.list', entityType: 'case', entityId: c.id });
  return visitViews(em, visits, todayIn(settings.timeZone));
}

// --- changes --------------------------------------------------------------------------------------

/**
 * Changes a visit's status (only along lib/recall VISIT_TRANSITIONS: anything else is a 409
 * naming the allowed moves), its appointment date or its note. Status 'closed' closes it as
 * lost to follow-up (see closeVisitAsLost). Returns the case's visits after the change.
 */
export async function updateVisit(em: EntityManager, actor: Actor, visitId: string, raw: unknown): Promise<VisitView[]> {
  assertCan(actor, 'recall.manage');
  const visit = await findVisit(em, actor, visitId);
  const input = parseInput(VisitUpdateSchema, raw);
  const from = visit.status as VisitStatus;
  if (input.status === 'closed' && from !== 'closed') {
    return closeVisitAsLost(em, actor, visit.id, { note: input.note ?? undefined });
  }
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  const changes: Record<string, unknown> = {};
  if (input.status !== undefined && input.status !== from) {
    assertTransition(from, input.status);
    setStatus(visit, input.status, actor.userId);
    changes.status = { from, to: input.status };
  }
  if (input.bookedDate !== undefined && input.bookedDate !== (visit.bookedDate ?? null)) {
    if (isFinalStatus(visit.status as VisitStatus)) {
      throw new ConflictError(`The visit is ${VISIT_STATUS_LABELS[visit.status as VisitStatus].toLowerCase()}: its appointment can no longer change.`);
    }
    visit.bookedDate = input.bookedDate;
    changes.bookedDate = true;
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
}

/**
 * Closes a visit as lost to follow-up — the practice stops trying — together with the case's
 * later visits that are not final yet (open, missed or declined): a patient lost at 12 months is
 * not invited at 24. Attended, cancelled and already closed visits are left as they are.
 * Returns the case's visits after the change.
 */
export async function closeVisitAsLost(em: EntityManager, actor: Actor, visitId: string, raw: unknown): Promise<VisitView[]> {
  assertCan(actor, 'recall.manage');
  const visit = await findVisit(em, actor, visitId);
  const input = parseInput(CloseAsLostSchema, raw ?? {});
  const from = visit.status as VisitStatus;
  if (from !== 'closed') assertTransition(from, 'closed');
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  const visits = await loadVisits(em, visit.case.id);
  const closed: string[] = [];
  for (const v of visits) {
    if (v.id !== visit.id && (v.milestone <= visit.milestone || isFinalStatus(v.status as VisitStatus))) continue;
    if (v.status === 'closed') continue;
    setStatus(v, 'closed', actor.userId);
    v.lostToFollowUp = true;
    v.closedOn = today;
    if (v.id === visit.id && input.note) v.note = input.note;
    closed.push(v.id);
  }
  setVisitSummary(await em.findOneOrFail(TreatmentCaseSchema, visit.case.id), visits);
  await em.flush();
  if (closed.length) {
    await audit(em, actor, { action: 'visit.closed_lost', entityType: 'visit', entityId: visit.id, detail: { caseId: visit.case.id, visitIds: closed } });
  }
  return visitViews(em, visits, today);
}

// --- shared with the case, review and import services ----------------------------------------------

export function assertTransition(from: VisitStatus, to: VisitStatus): void {
  if (canTransition(from, to)) return;
  const allowed = VISIT_TRANSITIONS[from];
  const label = (s: VisitStatus) => VISIT_STATUS_LABELS[s].toLowerCase();
  throw new ConflictError(
    `A visit that is ${label(from)} cannot become ${label(to)}. ` +
      (allowed.length ? `From ${label(from)} it can become: ${allowed.map(label).join(', ')}.` : `${VISIT_STATUS_LABELS[from]} is final.`),
  );
}

export function setStatus(visit: RecallVisit, to: VisitStatus, userId: string | null): void {
  visit.status = to;
  visit.statusChangedAt = new Date();
  visit.statusChangedBy = (userId ? { id: userId } : null) as never;
  if (to === 'invited' || to === 'confirmed') visit.reinviteNeeded = false;
}

/** The case's visits, in milestone order. */
export function loadVisits(em: EntityManager, caseId: string): Promise<RecallVisit[]> {
  return em.find(RecallVisitSchema, { case: caseId }, { orderBy: { milestone: 'asc' } });
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

export async function visitViews(em: EntityManager, visits: readonly RecallVisit[], today: string): Promise<VisitView[]> {
  const reviews = visits.length
    ? await em.find(ReviewSchema, { visit: { $in: visits.map((v) => v.id) } }, { fields: ['id', 'visit'], orderBy: { reviewDate: 'asc' } })
    : [];
  return visits.map((v) => visitView(v, today, reviews.filter((r) => r.visit?.id === v.id).map((r) => r.id)));
}

export function visitView(v: RecallVisit, today: string, reviewIds: string[] = []): VisitView {
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
    allowedNext: [...VISIT_TRANSITIONS[status]],
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
  };
}

async function findVisit(em: EntityManager, actor: Actor, id: string): Promise<RecallVisit> {
  const visit = await em.findOne(RecallVisitSchema, { id: assertId(id, 'visit'), practice: actor.practiceId });
  if (!visit) throw new NotFoundError('No such visit.');
  return visit;
}


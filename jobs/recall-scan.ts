/**
 * The `recall-scan` job: run by the hourly job scheduler, once when the worker starts, and again
 * whenever the worker's Redis connection comes back (a restarted Redis may have lost every job).
 * Idempotent: a second run changes nothing and queues nothing new.
 *
 * For each practice, on the practice's own today:
 *   1. reconcile  outbox rows still queued or sending get their job back (lib/services/recall-outbox)
 *   2. missed     open visits (planned, invited, confirmed) whose window has ended become missed
 *                 (lib/recall/plan.ts markPastDue; the same rule as for imported cases)
 *   3. lost       missed visits with the practice's number of unanswered attempts (sent reminders
 *                 and calls noted as not reached, after the last reply) close as lost to follow-up,
 *                 with the case's later visits that are not final (as lib/services/visits.ts does)
 *   4. steps      visits entering a reminder step (lib/recall/reminders stepsEntering: consent,
 *                 status, window, history, replies) get their outbox row — unique per visit and
 *                 step — and then their job, delayed past the practice's quiet hours
 */
import { randomUUID } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { RecallScanData, RemindersQueue } from '@/lib/queue';
import { addDaysTo, type CalendarDate } from '@/lib/registry/calendar-date';
import {
  AWAITING_REPLY_STATUSES,
  CONTACT_STATUSES,
  MISSED_STATUSES,
  OPEN_VISIT_STATUSES,
  quietDelayMs,
  shouldCloseAsLost,
  transitionVisit,
  stepsEntering,
  unansweredAttempts,
  type ReminderHistoryEntry,
  type ReminderPolicy,
  type ReminderVisit,
  type VisitStatus,
} from '@/lib/recall';
import { visitStatusColumns, type VisitStatusRow } from '@/lib/services/recall-common';
import {
  EMAIL_CONSENT_SQL,
  enqueueOutbox,
  insertOutboxRows,
  knexOf,
  lastReplies,
  ofRound,
  reconcileOutbox,
  reminderHistory,
  reminderPolicyOf,
  type ReconcileResult,
} from '@/lib/services/recall-outbox';
import { todayIn } from '@/lib/services/registry-common';
import { closeAsLost, loadVisits, refreshNextVisit } from '@/lib/services/visits';

export interface ScanContext {
  em: () => EntityManager;
  queue: RemindersQueue;
  now?: () => Date;
  log?: (message: string) => void;
}

export interface PracticeScan {
  practiceId: string;
  today: CalendarDate;
  markedMissed: number;
  closedLost: number;
  queued: number;
}

export interface ScanSummary {
  practices: PracticeScan[];
  reconcile: ReconcileResult;
  /** New outbox rows queued by this scan, all practices. */
  queued: number;
}

export async function runRecallScan(ctx: ScanContext, data: RecallScanData): Promise<ScanSummary> {
  const now = ctx.now?.() ?? new Date();
  const em = ctx.em();
  const reconcile = await reconcileOutbox(em, ctx.queue, data.practiceId);
  const knex = knexOf(em);
  const q = knex('practice').select('id', 'time_zone', 'reminder_policy').orderBy('id');
  if (data.practiceId) q.where('id', data.practiceId);
  const practices = (await q) as { id: string; time_zone: string; reminder_policy: unknown }[];
  const out: PracticeScan[] = [];
  for (const p of practices) {
    const today = data.day ?? todayIn(p.time_zone, now);
    const policy = reminderPolicyOf(p.reminder_policy);
    const markedMissed = await markPastDueMissed(ctx.em(), p.id, today);
    const closedLost = await closeUnanswered(ctx.em(), p.id, p.time_zone, policy, today);
    const queued = await queueSteps(ctx, p.id, p.time_zone, policy, today, now);
    out.push({ practiceId: p.id, today, markedMissed, closedLost, queued });
  }
  const summary = { practices: out, reconcile, queued: out.reduce((n, p) => n + p.queued, 0) };
  ctx.log?.(
    `[recall-scan] ${out.length} practice(s): ${summary.queued} reminder(s) queued, ` +
      `${out.reduce((n, p) => n + p.markedMissed, 0)} visit(s) missed, ${out.reduce((n, p) => n + p.closedLost, 0)} closed as lost; ` +
      `outbox: ${reconcile.open} open, ${reconcile.requeued} re-queued, ${reconcile.finalized} given up`,
  );
  return summary;
}

/** Step 2: open visits whose window ended before today become missed (lib/recall transitionVisit, reason window_ended). */
async function markPastDueMissed(em: EntityManager, practiceId: string, today: CalendarDate): Promise<number> {
  return em.transactional(async (tx) => {
    const knex = knexOf(tx);
    const now = new Date();
    const candidates = (await knex('recall_visit')
      .where('practice_id', practiceId)
      .whereIn('status', OPEN_VISIT_STATUSES)
      .where('window_end', '<', today)
      .forUpdate()
      .select('id', 'status', 'milestone', 'window_start', 'window_end', 'booked_date', 'case_id')) as (VisitStatusRow & { case_id: string })[];
    // The rule decides each (a visit booked beyond its window stays open until its appointment).
    const rows: (VisitStatusRow & { case_id: string; columns: Record<string, unknown> })[] = [];
    for (const r of candidates) {
      const t = transitionVisit(
        { status: r.status, windowStart: r.window_start, windowEnd: r.window_end, bookedDate: r.booked_date ?? null },
        { to: 'missed', on: today, by: 'system', missedReason: 'window_ended' },
      );
      if (t.ok) rows.push({ ...r, columns: visitStatusColumns(t.changes, null, now) });
    }
    if (!rows.length) return 0;
    for (let i = 0; i < rows.length; i += 5000) {
      const chunk = rows.slice(i, i + 5000);
      // Every change the rule gives here is the same (missed, window_ended, today): one statement.
      await knex('recall_visit')
        .whereIn('id', chunk.map((r) => r.id))
        .update(chunk[0]!.columns);
      await knex('contact_log_entry').insert(
        chunk.map((r) => ({ id: randomUUID(), practice_id: practiceId, visit_id: r.id, at: now, kind: 'status_change', by: 'system', from_status: r.status, to_status: r.columns.status as VisitStatus })),
      );
      await knex('audit_event').insert(
        chunk.map((r) => ({
          id: randomUUID(),
          at: now,
          practice_id: practiceId,
          action: 'visit.marked_missed',
          entity_type: 'visit',
          entity_id: r.id,
          detail: JSON.stringify({ by: 'recall-scan', from: r.status, windowEndedBefore: today }),
        })),
      );
    }
    await refreshNextVisit(tx, [...new Set(rows.map((r) => r.case_id))]);
    return rows.length;
  });
}

/** Step 3: missed visits whose unanswered attempts reached the practice's number close as lost. */
async function closeUnanswered(em: EntityManager, practiceId: string, timeZone: string, policy: ReminderPolicy, today: CalendarDate): Promise<number> {
  const knex = knexOf(em);
  // Candidates: enough sent messages and unanswered calls in total; the exact rule is applied below.
  const candidates = (await knex('recall_visit as v')
    .where('v.practice_id', practiceId)
    .whereIn('v.status', MISSED_STATUSES)
    .whereRaw(
      `((select count(*) from reminder r where r.visit_id = v.id and r.status = 'sent') +
        (select count(*) from contact_log_entry e where e.visit_id = v.id and e.kind = 'call' and e.reached = false)) >= ?`,
      [policy.lostAfterUnansweredAttempts],
    )
    .select('v.id', 'v.case_id', 'v.milestone')) as { id: string; case_id: string; milestone: number }[];
  if (!candidates.length) return 0;
  const ids = candidates.map((c) => c.id);
  const attempts = (await knex
    .select('visit_id', 'day')
    .from(
      knex.raw(
        `(select visit_id, sent_on as day from reminder where status = 'sent' and visit_id = any(?::uuid[])
          union all
          select visit_id, ("at" at time zone ?)::date as day from contact_log_entry where kind = 'call' and reached = false and visit_id = any(?::uuid[])) as a`,
        [ids, timeZone, ids],
      ),
    )) as { visit_id: string; day: string }[];
  const byVisit = new Map<string, { on: CalendarDate }[]>();
  for (const a of attempts) {
    const list = byVisit.get(a.visit_id) ?? [];
    list.push({ on: a.day.slice(0, 10) });
    byVisit.set(a.visit_id, list);
  }
  const replies = await lastReplies(em, ids, timeZone);
  let closed = 0;
  for (const c of candidates) {
    const unanswered = unansweredAttempts(byVisit.get(c.id) ?? [], policy, today, replies.get(c.id) ?? null);
    if (!shouldCloseAsLost({ status: 'missed' }, unanswered, policy)) continue;
    closed += await closeLost(em.fork(), practiceId, c.id, c.case_id, today, unanswered);
  }
  return closed;
}

/** Closes one missed visit and the case's later visits that are not final: lib/services/visits.ts closeAsLost, the desk's routine. */
async function closeLost(em: EntityManager, practiceId: string, visitId: string, caseId: string, today: CalendarDate, unanswered: number): Promise<number> {
  return em.transactional(async (tx) => {
    // Locked and re-checked: two scans at once (two workers) close it once.
    const still = await knexOf(tx)('recall_visit').where({ id: visitId }).whereIn('status', MISSED_STATUSES).forUpdate().first('id');
    if (!still) return 0;
    const visits = await loadVisits(tx, caseId);
    const visit = visits.find((v) => v.id === visitId);
    if (!visit || !MISSED_STATUSES.includes(visit.status as VisitStatus)) return 0;
    await closeAsLost(tx, null, {
      practiceId,
      visitId,
      visits,
      today,
      note: `Closed as lost to follow-up after ${unanswered} unanswered attempts.`,
      detail: { unanswered },
    });
    return 1;
  });
}

/** Step 4: the visits entering a step today get their outbox row, then their job. */
async function queueSteps(ctx: ScanContext, practiceId: string, timeZone: string, policy: ReminderPolicy, today: CalendarDate, now: Date): Promise<number> {
  const em = ctx.em();
  const knex = knexOf(em);
  const horizon = addDaysTo(today, 7 * policy.invitationWeeksBefore);
  const rows = (await knex('recall_visit as v')
    .join('treatment_case as c', 'c.id', 'v.case_id')
    .join('patient as p', 'p.id', 'c.patient_id')
    .where('v.practice_id', practiceId)
    .whereIn('v.status', CONTACT_STATUSES)
    .where('v.auto_reminders', true)
    .where('v.window_end', '>=', today)
    .where((b) => b.whereIn('v.status', AWAITING_REPLY_STATUSES).orWhere('v.due_date', '<=', horizon))
    .select('v.id', 'v.status', 'v.due_date', 'v.window_end', 'v.reminder_round', knex.raw(`${EMAIL_CONSENT_SQL} as consent`))) as {
    id: string;
    status: VisitStatus;
    reminder_round: number;
    due_date: string;
    window_end: string;
    consent: boolean;
  }[];
  if (!rows.length) return 0;
  const ids = rows.map((r) => r.id);
  const [history, replies] = await Promise.all([reminderHistory(em, ids), lastReplies(em, ids, timeZone)]);
  const visits: ReminderVisit[] = rows.map((r) => ({
    id: r.id,
    status: r.status,
    dueDate: r.due_date,
    windowEnd: r.window_end,
    recallContactConsent: r.consent,
    lastReplyOn: replies.get(r.id) ?? null,
  }));
  // Only the current round counts (a time proposed by e-mail starts a new one).
  const round = new Map(rows.map((r) => [r.id, r.reminder_round]));
  const flat: ReminderHistoryEntry[] = [];
  for (const [visitId, steps] of history) for (const s of ofRound(steps, round.get(visitId)!)) flat.push({ visitId, step: s.step, on: s.on });
  const entries = stepsEntering(visits, flat, policy, today);
  if (!entries.length) return 0;
  const inserted = await insertOutboxRows(
    em,
    entries.map((e) => ({ practiceId, visitId: e.visitId, step: e.step, round: round.get(e.visitId)!, origin: 'scan' as const, day: today })),
  );
  await enqueueOutbox(ctx.queue, inserted, quietDelayMs(policy.quietHours, now, timeZone));
  return inserted.length;
}

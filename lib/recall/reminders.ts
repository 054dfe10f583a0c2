/**
 * Reminders: which e-mail step a recall visit enters on a given day, the job id that makes a
 * repeated scan harmless, and when an unanswered visit closes as lost to follow-up. Pure code:
 * "today" and "now" are passed in (today in the practice's time zone), nothing reads the clock.
 *
 * The steps, in order (dates for the default policy, D = due date):
 *
 *   invitation         on or after D − invitationWeeksBefore weeks            (D − 21)
 *   second_invitation  on or after the invitation + secondInvitationAfterDays  (D − 11)
 *   last_notice        on or after D + lastNoticeDaysAfterDue                  (D + 14)
 *
 * and `proposal`, never entered by the scan: the desk proposing a time by e-mail. It starts a new
 * round of the steps (the visit's `reminderRound`): the steps before it no longer count, the
 * proposal takes the invitation's place, and the second invitation and last notice follow it
 * by the same rules. Callers pass only the current round's history.
 *
 * Rules, the same for the nightly scan and for each visit:
 * - Only visits that still need contact get a step: `planned` (not yet invited) and `invited`
 *   (no answer yet). Confirmed, attended, missed, declined, cancelled and closed visits get none.
 * - No step for a visit whose patient has not agreed to recall contact (`recallContactConsent`,
 *   decided by the caller from the patient's consents and channel).
 * - No step after the visit's window has ended (windowEnd < today): the visit is missed then.
 * - No step twice, and at most one step per visit per day. A step whose day has passed is still
 *   entered (a scan that did not run yesterday catches up), but a skipped second invitation is
 *   not sent once the last notice is due.
 * - Two messages to one visit are at least `secondInvitationAfterDays` apart: that is the time
 *   a patient is given to reply, so a late first invitation pushes the last notice back.
 * - A patient who has replied since the last message (`lastReplyOn`) gets nothing more
 *   automatically: the desk takes it from there. A new message sent by the desk restarts it.
 * - The first message is always the invitation (worded for an overdue visit when its due date
 *   has passed: lib/recall/wording.ts), whatever the visit's status: a visit marked `invited`
 *   with no message on record gets the invitation, never a last notice as its first message.
 *
 * The history of a visit is every outbox row for it — queued, sent or failed — with the day it
 * was queued or sent; a step the desk did by hand may be passed in as well.
 */
import { addDaysTo, compareDates, type CalendarDate } from '@/lib/registry/calendar-date';
import type { RecallPolicy } from '@/lib/schemas/recall-policy';
import type { QuietHours, ReminderPolicy } from '@/lib/schemas/reminder-policy';
import { isPastDue } from './plan';
import { needsContact, type VisitStatus } from './status';
import { isReminderStep, type ReminderStep } from './steps';

// The step vocabulary has a zod-free home of its own, so screens can import it without the schemas.
export { REMINDER_STEPS, REMINDER_STEP_LABELS, isReminderStep, type ReminderStep } from './steps';

export {
  DEFAULT_REMINDER_POLICY,
  ReminderPolicySchema,
  type ReminderPolicy,
  type ReminderPolicyInput,
  type QuietHours,
} from '@/lib/schemas/reminder-policy';

// The statuses that still need contact live with the other status lists (status.ts).
export { CONTACT_STATUSES, needsContact } from './status';

/** What the reminder rules need to know about a visit. */
export interface ReminderVisit<Id = string> {
  id: Id;
  status: VisitStatus;
  dueDate: CalendarDate;
  windowEnd: CalendarDate;
  /** The patient agrees to recall contact by e-mail (consent given, channel e-mail, address on file). */
  recallContactConsent: boolean;
  /** The day of the patient's latest reply about this visit, if any. */
  lastReplyOn?: CalendarDate | null;
}

/** One step already taken for a visit: queued, sent or failed, on `on`. */
export interface SentStep {
  step: ReminderStep;
  on: CalendarDate;
}

export interface ReminderHistoryEntry<Id = string> extends SentStep {
  visitId: Id;
}

export interface StepEntry<Id = string> {
  visitId: Id;
  step: ReminderStep;
}

/** The earliest days of the two steps that depend only on the due date. */
export function stepDates(dueDate: CalendarDate, policy: ReminderPolicy): { invitation: CalendarDate; lastNotice: CalendarDate } {
  return {
    invitation: addDaysTo(dueDate, -7 * policy.invitationWeeksBefore),
    lastNotice: addDaysTo(dueDate, policy.lastNoticeDaysAfterDue),
  };
}

const onOrAfter = (today: CalendarDate, date: CalendarDate) => compareDates(today, date) >= 0;

function latest(steps: readonly SentStep[]): CalendarDate | undefined {
  let last: CalendarDate | undefined;
  for (const s of steps) if (last === undefined || compareDates(s.on, last) > 0) last = s.on;
  return last;
}

function firstOn(steps: readonly SentStep[], step: ReminderStep): CalendarDate | undefined {
  let first: CalendarDate | undefined;
  for (const s of steps) if (s.step === step && (first === undefined || compareDates(s.on, first) < 0)) first = s.on;
  return first;
}

/** Consent, status and window allow contact on `today`. */
function contactAllowed(visit: ReminderVisit<unknown>, today: CalendarDate): boolean {
  return visit.recallContactConsent && needsContact(visit.status) && !isPastDue(visit, today);
}

/** The step `visit` enters on `today`, or null. See the rules at the top of this file. */
export function stepDue(
  visit: ReminderVisit<unknown>,
  sentSteps: readonly SentStep[],
  policy: ReminderPolicy,
  today: CalendarDate,
): ReminderStep | null {
  if (!contactAllowed(visit, today)) return null;
  if (sentSteps.some((s) => s.step === 'last_notice')) return null;

  const lastSentOn = latest(sentSteps);
  if (visit.lastReplyOn && (lastSentOn === undefined || compareDates(visit.lastReplyOn, lastSentOn) >= 0)) return null;

  const { invitation, lastNotice } = stepDates(visit.dueDate, policy);
  // The first message of a round: the invitation, or the proposal that started the round.
  const invitedOn = firstOn(sentSteps, 'invitation') ?? firstOn(sentSteps, 'proposal');
  if (invitedOn === undefined) return onOrAfter(today, invitation) ? 'invitation' : null;
  if (lastSentOn !== undefined && !onOrAfter(today, addDaysTo(lastSentOn, policy.secondInvitationAfterDays))) return null;
  if (onOrAfter(today, lastNotice)) return 'last_notice';
  if (
    invitedOn !== undefined &&
    !sentSteps.some((s) => s.step === 'second_invitation') &&
    onOrAfter(today, addDaysTo(invitedOn, policy.secondInvitationAfterDays))
  ) {
    return 'second_invitation';
  }
  return null;
}

/** The visits entering a step on `today`, each with its step, in the order of `visits`. */
export function stepsEntering<Id>(
  visits: readonly ReminderVisit<Id>[],
  history: readonly ReminderHistoryEntry<Id>[],
  policy: ReminderPolicy,
  today: CalendarDate,
): StepEntry<Id>[] {
  const byVisit = new Map<Id, SentStep[]>();
  for (const h of history) {
    const list = byVisit.get(h.visitId);
    if (list) list.push(h);
    else byVisit.set(h.visitId, [h]);
  }
  const entries: StepEntry<Id>[] = [];
  for (const visit of visits) {
    const step = stepDue(visit, byVisit.get(visit.id) ?? [], policy, today);
    if (step) entries.push({ visitId: visit.id, step });
  }
  return entries;
}

/**
 * The step a coordinator's "send now" sends: the next one not yet taken, without waiting for its
 * day (the last notice once its day has come). Consent, status and window still apply, and no
 * step is sent twice. A reply does not block it: the coordinator decided.
 */
export function nextStepNow(
  visit: ReminderVisit<unknown>,
  sentSteps: readonly SentStep[],
  policy: ReminderPolicy,
  today: CalendarDate,
): ReminderStep | null {
  if (!contactAllowed(visit, today)) return null;
  const taken = new Set(sentSteps.map((s) => s.step));
  if (taken.has('last_notice')) return null;
  if (!taken.has('invitation') && !taken.has('proposal')) return 'invitation';
  if (!taken.has('second_invitation') && !onOrAfter(today, stepDates(visit.dueDate, policy).lastNotice)) return 'second_invitation';
  return 'last_notice';
}

const JOB_ID_PART = /^[A-Za-z0-9_-]{1,64}$/;

/** The highest reminder round (a smallint column; one round per proposal sent). */
export const MAX_REMINDER_ROUND = 32_767;

/**
 * The BullMQ job id of one visit's step: 'reminder-<visitId>-<step>', and for the rounds a
 * proposal starts 'reminder-<visitId>-<step>-r<round>'. Deterministic, so a repeated scan or a
 * double click adds nothing while the first job is kept; never contains ':' and never parses as
 * an integer (BullMQ refuses both for custom ids). The outbox row per visit, round and step is
 * what guards once the job has been removed.
 */
export function reminderJobId(visitId: string, step: ReminderStep, round = 0): string {
  if (!JOB_ID_PART.test(visitId)) throw new RangeError(`A visit id for a job id uses letters, digits, - and _ only (got ${JSON.stringify(visitId)}).`);
  if (!isReminderStep(step)) throw new RangeError(`Not a reminder step: ${JSON.stringify(step)}`);
  if (!Number.isInteger(round) || round < 0 || round > MAX_REMINDER_ROUND) throw new RangeError(`Not a reminder round: ${JSON.stringify(round)}`);
  return round === 0 ? `reminder-${visitId}-${step}` : `reminder-${visitId}-${step}-r${round}`;
}

/**
 * How many contact attempts went unanswered by `today`: those after the patient's latest reply
 * (`lastReplyOn`, strictly later days) whose reply wait (`secondInvitationAfterDays`) is over.
 * Pass the messages that were actually sent (not the failed ones) and calls noted with no answer.
 */
export function unansweredAttempts(
  attempts: readonly { on: CalendarDate }[],
  policy: ReminderPolicy,
  today: CalendarDate,
  lastReplyOn?: CalendarDate | null,
): number {
  let n = 0;
  for (const a of attempts) {
    if (lastReplyOn && compareDates(a.on, lastReplyOn) <= 0) continue;
    if (onOrAfter(today, addDaysTo(a.on, policy.secondInvitationAfterDays))) n += 1;
  }
  return n;
}

/**
 * True when a visit should close as lost to follow-up: it is `missed` (its window ended without
 * an attendance) and `unansweredAttempts` reached the practice's number. Open visits never close
 * here — a patient may still come within the window, and closing is final — they become missed
 * at the window's end first (lib/recall/plan.ts) and close at the next scan.
 */
export function shouldCloseAsLost(
  visit: { status: VisitStatus },
  unanswered: number,
  policy: ReminderPolicy,
): boolean {
  return visit.status === 'missed' && unanswered >= policy.lostAfterUnansweredAttempts;
}

/**
 * The milestones (months) whose window ends before the last notice is due: their visits are
 * missed before it could go. For the settings screen to warn about.
 */
export function lastNoticeOutsideWindows(reminderPolicy: ReminderPolicy, recallPolicy: RecallPolicy): number[] {
  return recallPolicy.milestones.filter((m) => m.windowAfterDays < reminderPolicy.lastNoticeDaysAfterDue).map((m) => m.months);
}

const DAY_SECONDS = 24 * 60 * 60;

const minutesOf = (hhmm: string) => {
  const [h, m] = hhmm.split(':').map(Number) as [number, number];
  return h * 60 + m;
};

/** Seconds since local midnight of `now` in `timeZone` (an IANA name such as 'Europe/London'). */
function localSecondsOfDay(now: Date, timeZone: string): number {
  const parts = new Intl.DateTimeFormat('en-GB', {
    timeZone,
    hour: '2-digit',
    minute: '2-digit',
    second: '2-digit',
    hourCycle: 'h23',
  }).formatToParts(now);
  const get = (type: string) => Number(parts.find((p) => p.type === type)?.value ?? 0);
  return get('hour') * 3600 + get('minute') * 60 + get('second');
}

/**
 * How long a message due at `now` should wait for the practice's quiet hours to end, in ms
 * (0 outside quiet hours or when there are none). Quiet hours run from `start` (inclusive) to
 * `end` (exclusive) in the practice's time zone and may span midnight. On the night the clocks
 * change the wait can be an hour off; the worker checks again when the job runs.
 */
export function quietDelayMs(quiet: QuietHours | undefined, now: Date, timeZone: string): number {
  if (!quiet) return 0;
  const t = localSecondsOfDay(now, timeZone);
  const start = minutesOf(quiet.start) * 60;
  const end = minutesOf(quiet.end) * 60;
  const inQuiet = start < end ? t >= start && t < end : t >= start || t < end;
  if (!inQuiet) return 0;
  const seconds = (end - t + DAY_SECONDS) % DAY_SECONDS;
  return seconds * 1000 - now.getUTCMilliseconds();
}

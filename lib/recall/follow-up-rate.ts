/**
 * The follow-up rate of a practice: attended ÷ due, by milestone and by month of due date, each
 * with its n and a Wilson 95% interval (lib/stats). Pure code; "today" is passed in.
 *
 * Exactly what counts:
 * - Due: a visit whose due date has passed (dueDate < today; a visit due today is not yet due)
 *   and that was not cancelled. Cancelled visits were no longer needed (tooth extracted or
 *   re-treated, plan replaced), so they are neither a success nor a loss of follow-up.
 *   Statuses counted as due: planned, invited, confirmed, attended, missed, declined, closed.
 * - Attended: a due visit whose status is `attended`, whenever the review took place.
 * - Not attended: missed, declined and closed (lost to follow-up) — and the open ones (planned,
 *   invited, confirmed) whose due date has passed but whose window is still open. These are
 *   reported as `pending`: they may still come. By default they count as due, as the definition
 *   says; `{ pending: 'exclude' }` leaves them out of the denominator instead, which is fairer for
 *   the latest months.
 * - An empty group (n = 0) has rate null and interval null: there is nothing to estimate.
 */
import { compareDates, type CalendarDate } from '@/lib/registry/calendar-date';
import { wilsonInterval } from '@/lib/stats';
import { isOpenStatus, type VisitStatus } from './status';

export interface RateVisit {
  status: VisitStatus;
  dueDate: CalendarDate;
  /** Months after completion (6, 12, 24 …). */
  milestone: number;
}

export interface RateGroup<K> {
  key: K;
  /** n: visits counted as due. */
  due: number;
  attended: number;
  /** Open visits past their due date (counted in `due` unless pending = 'exclude'). */
  pending: number;
  /** attended ÷ due, or null when due = 0. */
  rate: number | null;
  /** Wilson 95% interval (Wilson 1927; Newcombe 1998, method 3), or null when due = 0. */
  interval: { lower: number; upper: number } | null;
}

export interface FollowUpRate {
  overall: RateGroup<'all'>;
  /** Ascending by milestone. */
  byMilestone: RateGroup<number>[];
  /** Ascending by month 'YYYY-MM' of the due date. */
  byMonth: RateGroup<string>[];
}

export interface FollowUpRateOptions {
  /** 'count_as_due' (default) or 'exclude' the open visits past their due date. */
  pending?: 'count_as_due' | 'exclude';
  /** Milestones to report even when they have no due visit (e.g. the practice's policy). */
  milestones?: readonly number[];
  /** Months to report even when empty: every month from `from` to `to`, both 'YYYY-MM'. */
  months?: { from: string; to: string };
}

/** Statuses that count as due once the due date has passed: all but cancelled. */
export const DUE_STATUSES: readonly VisitStatus[] = ['planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'closed'];
export const ATTENDED_STATUSES: readonly VisitStatus[] = ['attended'];

const MONTH = /^(\d{4})-(0[1-9]|1[0-2])$/;

interface Tally {
  due: number;
  attended: number;
  pending: number;
}

/** The group of a tally, with its rate and Wilson interval. */
function rateGroup<K>(key: K, t: Tally): RateGroup<K> {
  if (t.due === 0) return { key, due: 0, attended: 0, pending: t.pending, rate: null, interval: null };
  const w = wilsonInterval(t.attended, t.due, 0.95);
  return { key, due: t.due, attended: t.attended, pending: t.pending, rate: w.estimate, interval: { lower: w.lower, upper: w.upper } };
}

/** Every month 'YYYY-MM' from `from` to `to` inclusive (empty when `to` is earlier). */
export function monthsBetween(from: string, to: string): string[] {
  const a = MONTH.exec(from);
  const b = MONTH.exec(to);
  if (!a || !b) throw new RangeError(`Months are written YYYY-MM (got ${from} … ${to}).`);
  const out: string[] = [];
  let y = Number(a[1]);
  let m = Number(a[2]);
  const endY = Number(b[1]);
  const endM = Number(b[2]);
  while (y < endY || (y === endY && m <= endM)) {
    out.push(`${String(y).padStart(4, '0')}-${String(m).padStart(2, '0')}`);
    m += 1;
    if (m > 12) {
      m = 1;
      y += 1;
    }
  }
  return out;
}

export function followUpRate(visits: readonly RateVisit[], today: CalendarDate, options: FollowUpRateOptions = {}): FollowUpRate {
  const excludePending = options.pending === 'exclude';
  const empty = (): Tally => ({ due: 0, attended: 0, pending: 0 });
  const overall = empty();
  const byMilestone = new Map<number, Tally>((options.milestones ?? []).map((m) => [m, empty()]));
  const byMonth = new Map<string, Tally>(options.months ? monthsBetween(options.months.from, options.months.to).map((m) => [m, empty()]) : []);

  for (const v of visits) {
    if (compareDates(v.dueDate, today) >= 0) continue;
    if (!DUE_STATUSES.includes(v.status)) continue;
    const pending = isOpenStatus(v.status);
    const attended = ATTENDED_STATUSES.includes(v.status);
    const month = v.dueDate.slice(0, 7);
    const tallies = [overall, getOrAdd(byMilestone, v.milestone, empty), getOrAdd(byMonth, month, empty)];
    for (const t of tallies) {
      if (pending) t.pending += 1;
      if (pending && excludePending) continue;
      t.due += 1;
      if (attended) t.attended += 1;
    }
  }

  return {
    overall: rateGroup('all' as const, overall),
    byMilestone: [...byMilestone.entries()].sort((a, b) => a[0] - b[0]).map(([k, t]) => rateGroup(k, t)),
    byMonth: [...byMonth.entries()].sort((a, b) => (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0)).map(([k, t]) => rateGroup(k, t)),
  };
}

function getOrAdd<K, V>(map: Map<K, V>, key: K, make: () => V): V {
  let v = map.get(key);
  if (v === undefined) {
    v = make();
    map.set(key, v);
  }
  return v;
}

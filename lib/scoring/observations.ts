/**
 * A case's reviews as survival observations, in days since completion of treatment, for the
 * two endpoints of lib/scoring/README.md ("Case level: observations"):
 *
 * - healing (failure: disease, retreatment, apical surgery or extraction): interval-censored
 *   between the last review before the failure that was not a failure (0 when none) and the
 *   first failing review; exact when that review gives the event's own date (`eventDate`);
 *   without a failure, right-censored at the last review. The failure is the one that stands:
 *   disease at the latest review, or a terminal event — an early disease that a later review
 *   finds resolved (healed, healing or uncertain) is not a failure (as `currentOutcome`).
 * - tooth loss (event: extraction): between the last review at which the tooth was present and
 *   the review that found it extracted (exact with `eventDate`); otherwise right-censored at the
 *   last review at which it was present. Retreatment and apical surgery do not end it: pass the
 *   reviews of the tooth's later, linked cases too, and they keep the tooth followed.
 *
 * `{ left, right }`: `right: null` is right-censored at `left`; `left === right` is exact;
 * otherwise the event lies in (left, right].
 */
import { compareDates, daysBetween, isCalendarDate, type CalendarDate } from '../registry/calendar-date';
import { assessReview, isFailure, TERMINAL_EVENTS, type ClinicalSigns, type ReviewOutcome, type TerminalEvent } from './outcome';

export interface ObservedReview {
  /** 'YYYY-MM-DD', on or after completion. */
  date: CalendarDate;
  pai?: number;
  diameterMm?: number;
  signs?: ClinicalSigns;
  terminalEvent?: TerminalEvent;
  /** The day the terminal event happened, when known (an event elsewhere, reported later). */
  eventDate?: CalendarDate;
}

export interface CaseHistory {
  completedOn: CalendarDate;
  baseline: { pai: number } | { diameterMm: number };
  reviews: readonly ObservedReview[];
}

export interface Interval {
  left: number;
  /** null: right-censored at `left`. */
  right: number | null;
}

export interface CaseObservations {
  healing: Interval;
  toothLoss: Interval;
}

export interface ObservationOptions {
  /** The practice's minimum observation time (days, default 365); see assessReview. */
  minObservationDays?: number;
}

interface Prepared {
  index: number;
  days: number;
  eventDays: number | null;
  review: ObservedReview;
}

function checkDate(value: unknown, what: string): CalendarDate {
  if (!isCalendarDate(value)) throw new RangeError(`${what} must be a calendar date 'YYYY-MM-DD', got ${String(value)}`);
  return value;
}

function prepare(history: CaseHistory): Prepared[] {
  if (history === null || typeof history !== 'object' || !Array.isArray(history.reviews)) {
    throw new TypeError('caseObservations expects { completedOn, baseline, reviews: [...] }');
  }
  const completedOn = checkDate(history.completedOn, 'completedOn');
  return history.reviews
    .map((review, index) => {
      const date = checkDate(review?.date, `review ${index}: date`);
      if (compareDates(date, completedOn) < 0) throw new RangeError(`review ${index}: ${date} is before completion (${completedOn})`);
      if (review.terminalEvent !== undefined && !TERMINAL_EVENTS.includes(review.terminalEvent)) {
        throw new RangeError(`review ${index}: terminalEvent must be one of ${TERMINAL_EVENTS.join(', ')}`);
      }
      let eventDays: number | null = null;
      if (review.eventDate !== undefined) {
        const on = checkDate(review.eventDate, `review ${index}: eventDate`);
        if (review.terminalEvent === undefined) throw new RangeError(`review ${index}: an eventDate dates a terminal event; this review records none`);
        if (compareDates(on, date) > 0) throw new RangeError(`review ${index}: the event (${on}) cannot come after the review that records it (${date})`);
        if (compareDates(on, completedOn) < 0) throw new RangeError(`review ${index}: the event (${on}) is before completion (${completedOn})`);
        eventDays = daysBetween(completedOn, on);
      }
      return { index, days: daysBetween(completedOn, date), eventDays, review };
    })
    .sort((a, b) => a.days - b.days || Number(a.review.terminalEvent !== undefined) - Number(b.review.terminalEvent !== undefined) || a.index - b.index);
}

function checkEventAfter(p: Prepared, left: number, what: string): number {
  if (p.eventDays !== null && p.eventDays < left) {
    throw new RangeError(`review ${p.index}: the event date is before an earlier review (day ${left}) that found ${what}`);
  }
  return p.eventDays ?? p.days;
}

/** Both endpoints of one case (see the top of this file). */
export function caseObservations(history: CaseHistory, options: ObservationOptions = {}): CaseObservations {
  const reviews = prepare(history);
  return { healing: healingInterval(history, reviews, options), toothLoss: toothLossInterval(reviews) };
}

function healingInterval(history: CaseHistory, reviews: Prepared[], options: ObservationOptions): Interval {
  // One state per day: a failure if any review that day fails (same-day reviews count as the more severe).
  let lastClear = 0; // the last day without a failure (completion when none)
  let lastDay = 0;
  let run: { left: number; first: Prepared } | null = null;
  for (let i = 0; i < reviews.length; ) {
    const day = reviews[i]!.days;
    const sameDay: Prepared[] = [];
    while (i < reviews.length && reviews[i]!.days === day) sameDay.push(reviews[i++]!);
    const terminal = sameDay.find((p) => p.review.terminalEvent !== undefined);
    if (terminal) {
      // A terminal event ends the healing follow-up. An unbroken run of disease before it is
      // where the failure was first seen, unless the event's own date comes earlier still.
      const left = run ? run.left : lastClear;
      if (terminal.eventDays !== null && (!run || terminal.eventDays <= run.first.days)) {
        const at = checkEventAfter(terminal, left, 'no failure');
        return { left: at, right: at };
      }
      return run ? { left: run.left, right: run.first.days } : { left, right: day };
    }
    const failing = sameDay.find((p) => isFailure(assessAt(history, p, options)));
    if (failing) run ??= { left: lastClear, first: failing };
    else {
      run = null;
      lastClear = day;
    }
    lastDay = day;
  }
  if (run) return { left: run.left, right: run.first.days };
  return { left: lastDay, right: null };
}

function assessAt(history: CaseHistory, p: Prepared, options: ObservationOptions): ReviewOutcome {
  const r = p.review;
  const hasPai = r.pai !== undefined;
  const hasDiameter = r.diameterMm !== undefined;
  if (hasPai === hasDiameter) throw new RangeError(`review ${p.index}: give exactly one of pai or diameterMm (or a terminal event)`);
  return assessReview({
    daysSinceTreatment: p.days,
    baseline: history.baseline,
    current: hasPai ? { pai: r.pai! } : { diameterMm: r.diameterMm! },
    signs: r.signs,
    minObservationDays: options.minObservationDays,
  }).outcome;
}

function toothLossInterval(reviews: Prepared[]): Interval {
  let lastPresent = 0; // the tooth is there at completion
  for (const p of reviews) {
    if (p.review.terminalEvent === 'tooth-extracted') {
      const at = checkEventAfter(p, lastPresent, 'the tooth present');
      return { left: p.eventDays !== null ? at : lastPresent, right: at };
    }
    // present, retreated or operated: the tooth was there at this review
    lastPresent = p.days;
  }
  return { left: lastPresent, right: null };
}

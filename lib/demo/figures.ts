/**
 * The demo world's rates, computed the way Lamina computes them from stored reviews: the outcome
 * of each review by the scoring rules, tooth loss by `caseObservations` over the tooth's chain of
 * cases, survival by lib/stats `kaplanMeier`. Used by the generator's rate test
 * (tests/unit/demo/rates.test.ts) and by `scripts/demo-figures.ts`. Pure: no database.
 */
import { daysBetween } from '@/lib/registry/calendar-date';
import { assessRecordedReview, caseObservations, recordedHistory, type Interval, type RecordedReview, type ReviewOutcome } from '@/lib/scoring';
import { kaplanMeier } from '@/lib/stats';
import type { DemoCase, DemoReview, DemoWorld } from './cases';

export function caseReviews(c: DemoCase): DemoReview[] {
  return [...c.visits.flatMap((v) => (v.review ? [v.review] : [])), ...c.unplannedReviews].sort((a, b) => (a.reviewDate < b.reviewDate ? -1 : a.reviewDate > b.reviewDate ? 1 : 0));
}

function recorded(r: DemoReview): RecordedReview {
  return {
    reviewDate: r.reviewDate,
    toothStatus: r.toothStatus,
    paiScore: r.paiScore ?? null,
    signs: r.toothStatus === 'extracted' ? {} : r,
    eventDate: r.eventDate ?? null,
  };
}

export function reviewOutcome(c: DemoCase, r: DemoReview): ReviewOutcome {
  return assessRecordedReview({ completionDate: c.data.completionDate, baselinePai: c.data.paiScore }, recorded(r)).outcome;
}

/** Each tooth's first case with the cases that follow it (retreatment, surgery), in order. */
export function toothChains(world: DemoWorld): DemoCase[][] {
  const next = new Map<string, DemoCase>();
  for (const c of world.cases) if (c.previousCaseKey) next.set(c.previousCaseKey, c);
  return world.cases
    .filter((c) => c.previousCaseKey === null)
    .map((first) => {
      const chain = [first];
      for (let n = next.get(first.key); n; n = next.get(n.key)) chain.push(n);
      return chain;
    });
}

/** Tooth loss from the first case's completion, followed across the tooth's later cases. */
export function toothLoss(chain: DemoCase[]): Interval {
  const first = chain[0]!;
  const reviews = chain.flatMap(caseReviews).map(recorded);
  return caseObservations(recordedHistory({ completionDate: first.data.completionDate, baselinePai: first.data.paiScore }, reviews)).toothLoss;
}

/** Kaplan–Meier survival at `days`, taking an interval's event at its right end (the visit date, as the literature). */
export function survivalAt(intervals: Interval[], days: number): { survival: number; lower: number; upper: number; n: number } {
  const steps = kaplanMeier(intervals.map((i) => (i.right === null ? { time: i.left, event: false } : { time: i.right, event: true })));
  let row = { survival: 1, lower: 1, upper: 1 };
  for (const s of steps) if (s.time <= days) row = s;
  return { survival: row.survival, lower: row.lower, upper: row.upper, n: intervals.length };
}

export interface SuccessRate {
  /** cases judged: success or failure (uncertain left out) */
  n: number;
  strict: number;
  lenient: number;
  /** reviews at the milestone scored uncertain (not in n) */
  uncertain: number;
}

function rate(judged: (ReviewOutcome | null)[]): SuccessRate {
  const known = judged.filter((o): o is ReviewOutcome => o !== null);
  const decided = known.filter((o) => o !== 'uncertain');
  const n = decided.length;
  return {
    n,
    strict: decided.filter((o) => o === 'healed').length / n,
    lenient: decided.filter((o) => o === 'healed' || o === 'healing').length / n,
    uncertain: known.length - n,
  };
}

/** The case's outcome at its `months` visit: that review's, or a failure found earlier; null when not seen. */
export function outcomeAtMilestone(c: DemoCase, months: number): ReviewOutcome | null {
  const visit = c.visits.find((v) => v.milestone === months);
  if (!visit) return null;
  const review = visit.review;
  const before = caseReviews(c).filter((r) => r.reviewDate < (review?.reviewDate ?? visit.windowStart) && r.toothStatus !== 'present');
  if (before.length > 0) return reviewOutcome(c, before[0]!);
  return review ? reviewOutcome(c, review) : null;
}

/** The outcome at the latest review a year or more after completion (a terminal event before it counts). */
export function outcomeAfterAYear(c: DemoCase): ReviewOutcome | null {
  const reviews = caseReviews(c);
  const terminal = reviews.find((r) => r.toothStatus !== 'present');
  if (terminal) return reviewOutcome(c, terminal);
  const late = reviews.filter((r) => daysBetween(c.data.completionDate, r.reviewDate) >= 365);
  return late.length ? reviewOutcome(c, late[late.length - 1]!) : null;
}

export const successAtMilestone = (cases: DemoCase[], months: number): SuccessRate => rate(cases.map((c) => outcomeAtMilestone(c, months)));
export const successAfterAYear = (cases: DemoCase[]): SuccessRate => rate(cases.map(outcomeAfterAYear));

/** Treated teeth (patient and tooth) per patient. */
export function teethPerPatient(world: DemoWorld): { mean: number; max: number } {
  const teeth = new Map<string, Set<number>>();
  for (const c of world.cases) {
    const set = teeth.get(c.patientKey) ?? new Set<number>();
    set.add(c.data.tooth);
    teeth.set(c.patientKey, set);
  }
  const sizes = [...teeth.values()].map((s) => s.size);
  return { mean: sizes.reduce((a, b) => a + b, 0) / world.patients.length, max: Math.max(...sizes) };
}

/**
 * The demo generator's dropout (its calibration, not a screen figure): Kaplan–Meier of the time from
 * completion to dropping out of recall for good — the end of the
 * window of the first missed (or closed) visit after which the case has no attended review —
 * censored at today or at the tooth's event; the share dropped out by `days` (29–35% by four years).
 * The registry's "lost to follow-up" is another quantity with one definition, lib/outcomes/cases.ts
 * `lostAt` (due, outcome not known then), which the outcomes screens show.
 */
export function lostBy(world: DemoWorld, days: number): number {
  const obs = world.cases.map((c) => {
    const event = caseReviews(c).find((r) => r.toothStatus !== 'present');
    const lastAttended = c.visits.map((v) => v.status).lastIndexOf('attended');
    const dropped = c.visits.slice(lastAttended + 1).find((v) => v.status === 'missed' || v.status === 'closed');
    if (dropped && !event) return { time: daysBetween(c.data.completionDate, dropped.windowEnd), event: true };
    return { time: daysBetween(c.data.completionDate, event ? event.reviewDate : world.today), event: false };
  });
  let s = 1;
  for (const step of kaplanMeier(obs)) if (step.time <= days) s = step.survival;
  return 1 - s;
}

/** Case groups used by the test and the figures. */
export const hasLesion = (c: DemoCase) => c.data.paiScore >= 3;
export const fillClassOf = (c: DemoCase): 'within' | 'short' | 'beyond' | null => {
  const d = (c.data.canals ?? []).flatMap((x) => (x.fillToApexMm === undefined ? [] : [x.fillToApexMm]));
  return d.length === 0 ? null : d.some((x) => x < 0) ? 'beyond' : d.some((x) => x > 2) ? 'short' : 'within';
};

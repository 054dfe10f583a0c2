import { describe, expect, it } from 'vitest';
import { orderWorklist, planReReviewVisit, urgencyOf, worklistEntries, worklistEntry, yearsOf, type CurrentDecision } from '@/lib/outcomes/worklist';
import { addDaysTo } from '@/lib/registry/calendar-date';
import { defaultWindow } from '@/lib/schemas/recall-policy';
import { at, DONE, outcomeCase as kase, present, review } from '../../support/outcome-cases';

// The non-healing worklist's rule (lib/outcomes/worklist.ts). Source of the four-year rule: European
// Society of Endodontology (2006), Quality guidelines for endodontic treatment, Int Endod J
// 39:921–930 — judge at one year, follow an unchanged or smaller lesion up to four years (page
// numbers from memory, as cited in lib/scoring/README.md). Outcomes of single reviews come from
// lib/scoring (Friedman & Mor 2004; its own tests name the sources); here only which case qualifies.
const MIN_OBS = 365;

describe('which latest-review states qualify (ESE 2006 four-year rule)', () => {
  const today = at(1000);
  it('disease at the latest review qualifies at any time (Friedman & Mor 2004: a larger lesion is disease)', () => {
    const e = worklistEntry(kase({ reviews: [present(400, 5)] }), today, MIN_OBS);
    expect(e).toMatchObject({ reason: 'disease', outcome: 'disease', latestReviewDate: at(400), symptomatic: false });
  });
  it('an unchanged lesion on or after the minimum observation time is disease; before it, uncertain (ESE 2006: judge at one year)', () => {
    expect(worklistEntry(kase({ reviews: [present(365, 4)] }), today, MIN_OBS)?.reason).toBe('disease');
    expect(worklistEntry(kase({ reviews: [present(364, 4)] }), today, MIN_OBS)).toBeNull(); // uncertain, not yet four years
  });
  it('a clinical sign makes disease and is marked symptomatic (Friedman & Mor 2004)', () => {
    expect(worklistEntry(kase({ reviews: [present(400, 1, { sinusTract: true })] }), today, MIN_OBS)).toMatchObject({ reason: 'disease', symptomatic: true });
    // mobility is recorded but not scored (lib/scoring README: a periodontal finding)
    expect(worklistEntry(kase({ reviews: [present(400, 1, { mobility: true })] }), today, MIN_OBS)).toBeNull();
  });
  it('healed does not qualify, even past four years', () => {
    expect(worklistEntry(kase({ reviews: [present(400, 1)] }), at(3000), MIN_OBS)).toBeNull();
  });
  it('only the latest review counts: disease then healed is off the list, healed then disease is on', () => {
    expect(worklistEntry(kase({ reviews: [present(400, 5), present(800, 1)] }), today, MIN_OBS)).toBeNull();
    expect(worklistEntry(kase({ reviews: [present(400, 1), present(800, 5)] }), today, MIN_OBS)?.latestReviewDate).toBe(at(800));
  });
  it('two reviews on the same day count as the more severe (lib/scoring currentOutcome)', () => {
    expect(worklistEntry(kase({ reviews: [present(800, 1), present(800, 5)] }), today, MIN_OBS)?.reason).toBe('disease');
  });
  it('no review: not on the list (that is the follow-up rate’s business)', () => {
    expect(worklistEntry(kase(), at(3000), MIN_OBS)).toBeNull();
  });
});

describe('the four-year boundary (ESE 2006; 4 × 365.25 = 1461 days, lib/scoring HEALING_WINDOW_DAYS)', () => {
  const healing = kase({ reviews: [present(400, 3)] }); // PAI 4 → 3: lesion smaller, healing
  const uncertain = kase({ reviews: [present(200, 4)] }); // unchanged before the minimum observation time
  it('healing: day 1461 is still inside the window, day 1462 is past', () => {
    expect(worklistEntry(healing, at(1461), MIN_OBS)).toBeNull();
    expect(worklistEntry(healing, at(1462), MIN_OBS)).toMatchObject({ reason: 'healing_past_four_years', outcome: 'healing', daysSinceCompletion: 1462 });
  });
  it('uncertain: the same boundary', () => {
    expect(worklistEntry(uncertain, at(1461), MIN_OBS)).toBeNull();
    expect(worklistEntry(uncertain, at(1462), MIN_OBS)?.reason).toBe('uncertain_past_four_years');
  });
  it('a review past four years that still finds the lesion only smaller is disease (ESE 2006)', () => {
    expect(worklistEntry(kase({ reviews: [present(1462, 3)] }), at(1500), MIN_OBS)?.reason).toBe('disease');
    expect(worklistEntry(kase({ reviews: [present(1461, 3)] }), at(1461), MIN_OBS)).toBeNull(); // healing on day 1461
  });
  it('years since completion with one decimal (365.25 days a year)', () => {
    expect(yearsOf(1462)).toBe(4);
    expect(yearsOf(1644)).toBe(4.5);
  });
});

describe('terminal events and later cases are excluded', () => {
  const today = at(2000);
  it('extraction, retreatment or apical surgery found at a review ends the case (lib/scoring currentOutcome)', () => {
    for (const status of ['extracted', 'retreated', 'surgery'] as const) {
      const c = kase({ reviews: [present(400, 5), review(600, status)] });
      expect(worklistEntry(c, today, MIN_OBS)).toBeNull();
    }
    // a terminal event stays the outcome even when a later review is recorded
    const c = kase({ reviews: [review(600, 'retreated'), present(900, 5)] });
    expect(worklistEntry(c, today, MIN_OBS)).toBeNull();
  });
  it('a case whose tooth has a later completed case is off the list; its follower is judged on its own', () => {
    const first = kase({ id: 'first', reviews: [present(400, 5)] });
    const later = kase({ id: 'later', previousCaseId: 'first', completionDate: at(500), reviews: [] });
    expect(worklistEntries([first], [first], today, MIN_OBS).map((e) => e.caseId)).toEqual(['first']);
    expect(worklistEntries([first, later], [first, later], today, MIN_OBS)).toEqual([]);
  });
});

describe('urgency order', () => {
  const today = at(2000);
  const e = (id: string, reviewDay: number, signs = {}, pai = 5) => worklistEntry(kase({ id, reviews: [present(reviewDay, pai, signs)] }), today, MIN_OBS)!;
  it('to decide (symptomatic disease, disease, past four years; oldest review first), then overdue, then in hand by date', () => {
    const entries = [e('past4', 400, {}, 3), e('old', 500), e('recent', 900), e('sympt', 950, { swelling: true }), e('watchLate', 600), e('planned', 600), e('stale', 1500)];
    const decisions: Record<string, CurrentDecision> = {
      watchLate: { step: 'watch', date: at(1900), decidedOn: at(700) },
      planned: { step: 'retreat', date: at(2100), decidedOn: at(700) },
      stale: { step: 'watch', date: at(2200), decidedOn: at(1400) }, // recorded before the latest review
    };
    const out = orderWorklist(entries, (id) => decisions[id] ?? null, today);
    expect(out.map((x) => x.caseId)).toEqual(['sympt', 'old', 'recent', 'stale', 'past4', 'watchLate', 'planned']);
    expect(out.map((x) => x.urgency)).toEqual(['decide', 'decide', 'decide', 'decide', 'decide', 'overdue', 'in_hand']);
  });
  it('a step recorded on the day of the latest review stands; a referral never becomes overdue', () => {
    const entry = { latestReviewDate: at(600) };
    expect(urgencyOf(entry, { step: 'refer', date: at(700), decidedOn: at(600) }, today)).toBe('in_hand');
    expect(urgencyOf(entry, { step: 'extract', date: at(700), decidedOn: at(600) }, today)).toBe('overdue');
    expect(urgencyOf(entry, { step: 'extract', date: at(700), decidedOn: at(599) }, today)).toBe('decide');
  });
});

describe('the re-review visit (visit rules of lib/recall/plan.ts and lib/schemas/recall-policy.ts)', () => {
  const attended = (m: number, due: string, before: number, after: number) => ({ milestone: m, dueDate: due, windowStart: addDaysTo(due, -before), windowEnd: addDaysTo(due, after), status: 'attended' as const });
  it('a planned visit due on the date, milestone in whole months, the default window (common practice widths, Lamina’s own)', () => {
    const plan = planReReviewVisit([attended(12, '2021-01-01', 60, 120)], DONE, '2024-07-15', defaultWindow);
    expect(plan).toEqual({ create: true, milestone: 54, dueDate: '2024-07-15', windowStart: addDaysTo('2024-07-15', -90), windowEnd: addDaysTo('2024-07-15', 180) });
  });
  it('the window is cut so it does not overlap another visit’s; a taken milestone moves to the next free one', () => {
    const v48 = { ...attended(48, '2024-01-01', 90, 180) }; // window ends 2024-06-29
    const plan = planReReviewVisit([v48], DONE, '2024-08-01', defaultWindow);
    expect(plan).toMatchObject({ create: true, milestone: 55, windowStart: '2024-06-30', dueDate: '2024-08-01' });
    const taken = planReReviewVisit([{ ...attended(55, '2020-08-01', 0, 0) }], DONE, '2024-08-01', defaultWindow);
    expect(taken).toMatchObject({ create: true, milestone: 56 });
  });
  it('no second open visit; none inside another window; none past ten years', () => {
    expect(planReReviewVisit([{ ...attended(48, '2024-01-01', 90, 180), status: 'planned' }], DONE, '2025-01-01', defaultWindow)).toMatchObject({ create: false, reason: 'open_visit' });
    expect(planReReviewVisit([attended(48, '2024-01-01', 90, 180)], DONE, '2024-02-01', defaultWindow)).toMatchObject({ create: false, reason: 'no_room' });
    expect(planReReviewVisit([], DONE, '2031-01-01', defaultWindow)).toMatchObject({ create: false, reason: 'beyond_plan' });
  });
});

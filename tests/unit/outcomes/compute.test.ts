import { describe, expect, it } from 'vitest';
import { applyFilter, byFactor, isDue, lostAt, milestoneDays, overview, outcomeAfterAYear, outcomeAtMilestone, rate, toothLossObservations } from '@/lib/outcomes';
import { chiSquareTest } from '@/lib/stats';
import { at, outcomeCase as kase, present, review } from '../../support/outcome-cases';

// The outcomes area's definitions (lib/outcomes/cases.ts), checked by hand on small cases.
// Outcomes of single reviews come from lib/scoring (its own tests name the sources); here only
// which review counts, and when, is checked.

describe('milestones', () => {
  it('12 months is 365 days, 24 is 731, 48 is 1461 (months × 365.25 / 12)', () => {
    expect([12, 24, 48].map(milestoneDays)).toEqual([365, 731, 1461]);
  });

  it('takes the review nearest the milestone inside its window (± 3 months at 12 months)', () => {
    const c = kase({ reviews: [present(200, 4), present(300, 2), present(400, 1), present(480, 4)] });
    expect(outcomeAtMilestone(c, 12, 365)).toBe('healed'); // day 400 (35 days off) beats day 300 (65 days off); 480 is outside
    expect(outcomeAtMilestone(kase({ reviews: [present(200, 1)] }), 12, 365)).toBeNull(); // outside the window
  });

  it('a terminal event found before the window ends is the outcome; after it, not', () => {
    const extracted = review(300, 'extracted');
    expect(outcomeAtMilestone(kase({ reviews: [extracted, present(365, 1)] }), 12, 365)).toBe('tooth-extracted');
    const late = review(500, 'retreated');
    expect(outcomeAtMilestone(kase({ reviews: [present(365, 1), late] }), 12, 365)).toBe('healed');
    expect(outcomeAfterAYear(kase({ reviews: [present(365, 1), late] }), 365)).toBe('retreated');
  });

  it('the latest review a year or more after completion; none before a year', () => {
    expect(outcomeAfterAYear(kase({ reviews: [present(400, 1), present(800, 3)] }), 365)).toBe('healing');
    expect(outcomeAfterAYear(kase({ reviews: [present(200, 1)] }), 365)).toBeNull();
  });

  it('lost to follow-up: due, and the outcome then not known — whatever the desk did (one definition, lib/outcomes/cases.ts)', () => {
    const today = at(800);
    // due at 12 months (window ended day 456), no review: lost at 12 and at the ≥ 1-year endpoint
    expect(lostAt(kase(), 12, today, 365)).toBe(true);
    expect(lostAt(kase(), 'latest', today, 365)).toBe(true);
    // seen at day 300 (inside the 12-month window) but never a year or more after: not lost at 12, lost for the latest-review endpoint
    expect(lostAt(kase({ reviews: [present(300, 1)] }), 12, today, 365)).toBe(false);
    expect(lostAt(kase({ reviews: [present(300, 1)] }), 'latest', today, 365)).toBe(true);
    // a tooth event before the window's end is a known outcome: not lost
    expect(lostAt(kase({ reviews: [review(200, 'extracted')] }), 'latest', today, 365)).toBe(false);
    // not due yet: not lost, however unseen
    expect(lostAt(kase(), 24, today, 365)).toBe(false);
    expect(lostAt(kase(), 'latest', at(400), 365)).toBe(false);
    // a visit still open does not make a due, unseen case any less lost (it is counted as still invited)
    expect(lostAt(kase({ openVisit: true }), 'latest', today, 365)).toBe(true);
  });

  it('the overview: lost ÷ due at 12 months, those still invited, and the bounds count the same lost cases', () => {
    const today = at(800);
    const rows = [
      kase({ id: 'seen', reviews: [present(400, 1)] }),
      kase({ id: 'healing', reviews: [present(400, 3)] }),
      kase({ id: 'lost-closed' }),
      kase({ id: 'lost-invited', openVisit: true }),
      kase({ id: 'not-due', completionDate: at(500) }),
    ];
    const o = overview(rows, rows, today, 365);
    expect([o.lost.x, o.lost.n]).toEqual([2, 4]);
    expect(o.lostStillInvited).toBe(1);
    const latest = o.success.find((f) => f.at === 'latest')!;
    expect(latest.missing).toBe(2);
    // strict: 1 healed of 2 judged; best (1 + 2) / 4, worst 1 / 4 (worst-case / best-case analysis, every lost case a success or a failure)
    expect([latest.strict.x, latest.strict.n]).toEqual([1, 2]);
    expect(latest.strictBounds).toEqual({ best: 3 / 4, worst: 1 / 4 });
  });

  it('a case is due once the window has ended', () => {
    expect(isDue(kase(), 12, at(365 + 91))).toBe(true);
    expect(isDue(kase(), 12, at(365 + 90))).toBe(false);
  });
});

describe('filters and tooth loss', () => {
  it('keeps the period (inclusive), clinician and kind', () => {
    const rows = [kase({ id: 'a' }), kase({ id: 'b', completionDate: '2021-06-01', operatorId: 'u2' }), kase({ id: 'c', kind: 'nonsurgical_retreatment' })];
    expect(applyFilter(rows, { from: '2021-06-01' }).map((c) => c.id)).toEqual(['b']);
    expect(applyFilter(rows, { to: '2020-01-01' }).map((c) => c.id)).toEqual(['a', 'c']);
    expect(applyFilter(rows, { clinician: 'u2' }).map((c) => c.id)).toEqual(['b']);
    expect(applyFilter(rows, { kind: 'nonsurgical_retreatment' }).map((c) => c.id)).toEqual(['c']);
  });

  it('follows a tooth through its retreatment, counting the tooth once', () => {
    const first = kase({ id: 'a', reviews: [present(365, 4), review(400, 'retreated')] });
    const second = kase({ id: 'b', previousCaseId: 'a', completionDate: at(420), kind: 'nonsurgical_retreatment', reviews: [review(900, 'extracted')] });
    // the tooth was present at the retreatment (day 400) and found extracted at day 900
    expect(toothLossObservations([first, second], [first, second], 365)).toEqual([{ left: 400, right: 900 }]);
    // the retreatment alone: from its own completion
    expect(toothLossObservations([second], [first, second], 365)).toEqual([{ left: 0, right: 480 }]);
  });
});

describe('rates and factors', () => {
  it('greys fewer than 20 cases; an empty rate has no estimate', () => {
    expect(rate(5, 19).few).toBe(true);
    expect(rate(5, 20).few).toBe(false);
    expect(rate(0, 0)).toMatchObject({ estimate: null, few: true });
  });

  it('three levels use Pearson’s χ² on strict success (lib/stats chiSquareTest), flagging expected counts below 5', () => {
    const mk = (id: string, group: string, pai: number) => kase({ id, toothGroup: group, reviews: [present(400, pai)] });
    const rows = [mk('1', 'molar', 1), mk('2', 'molar', 4), mk('3', 'incisor', 1), mk('4', 'incisor', 1), mk('5', 'canine', 4)];
    const t = byFactor(rows, 'group', 365);
    // tooth groups from front to back (the vocabulary's order)
    expect(t.levels.map((l) => [l.level, l.strict.x, l.strict.n])).toEqual([
      ['Incisor', 2, 2],
      ['Canine', 0, 1],
      ['Molar', 1, 2],
    ]);
    expect(t.test).toMatchObject({ method: 'chi-square', sparse: true, pValue: chiSquareTest([[2, 0], [0, 1], [1, 1]]).pValue });
  });
});

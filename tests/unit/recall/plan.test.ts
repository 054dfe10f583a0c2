import { describe, expect, it } from 'vitest';
import {
  DEFAULT_RECALL_POLICY,
  RecallPolicySchema,
  isInWindow,
  isPastDue,
  markPastDue,
  planImportedVisits,
  planVisits,
  replan,
  type ExistingVisit,
} from '@/lib/recall';
import { addDaysTo, addMonthsClamped, daysBetween } from '@/lib/registry/calendar-date';
import { minimumDaysIn } from '@/lib/schemas/recall-policy';

const withFour = RecallPolicySchema.parse({ milestones: [{ months: 6 }, { months: 12 }, { months: 24 }, { months: 48 }] });

describe('planVisits', () => {
  it('plans 6, 12 and 24 months by default, with the default windows', () => {
    expect(planVisits('2024-01-15')).toEqual([
      { milestone: 6, dueDate: '2024-07-15', windowStart: '2024-06-15', windowEnd: '2024-09-13' },
      { milestone: 12, dueDate: '2025-01-15', windowStart: '2024-11-16', windowEnd: '2025-05-15' },
      { milestone: 24, dueDate: '2026-01-15', windowStart: '2025-10-17', windowEnd: '2026-07-14' },
    ]);
  });

  it.each([
    ['2025-08-31', [6, '2026-02-28'], [12, '2026-08-31'], [24, '2027-08-31']], // the issue's example
    ['2023-08-31', [6, '2024-02-29'], [12, '2024-08-31'], [24, '2025-08-31']], // leap February
    ['2024-02-29', [6, '2024-08-29'], [12, '2025-02-28'], [24, '2026-02-28']], // from a leap day
    ['2024-03-31', [6, '2024-09-30'], [12, '2025-03-31'], [24, '2026-03-31']],
    ['2023-12-31', [6, '2024-06-30'], [12, '2024-12-31'], [24, '2025-12-31']],
  ] as const)('due dates from %s clamp at month ends', (completion, ...expected) => {
    const dues = planVisits(completion).map((v) => [v.milestone, v.dueDate]);
    expect(dues).toEqual(expected);
  });

  it('counts each milestone from the completion date, so clamping never accumulates', () => {
    const [six, twelve] = planVisits('2025-08-31');
    expect(six!.dueDate).toBe('2026-02-28');
    expect(twelve!.dueDate).toBe('2026-08-31'); // not 2026-08-28
  });

  it('adds the practice’s 48-month milestone (ESE 2006: up to four years)', () => {
    const visits = planVisits('2024-02-29', withFour);
    expect(visits.map((v) => v.milestone)).toEqual([6, 12, 24, 48]);
    expect(visits[3]).toEqual({ milestone: 48, dueDate: '2028-02-29', windowStart: '2027-12-01', windowEnd: '2028-08-27' });
  });

  it('uses a practice’s own windows', () => {
    const policy = RecallPolicySchema.parse({ milestones: [{ months: 12, windowBeforeDays: 14, windowAfterDays: 28 }] });
    expect(planVisits('2024-01-10', policy)).toEqual([
      { milestone: 12, dueDate: '2025-01-10', windowStart: '2024-12-27', windowEnd: '2025-02-07' },
    ]);
  });
});

describe('recall policy schema', () => {
  it('fills default windows and sorts milestones', () => {
    const p = RecallPolicySchema.parse({ milestones: [{ months: 24 }, { months: 6 }, { months: 12 }] });
    expect(p).toEqual(DEFAULT_RECALL_POLICY);
    expect(p.milestones).toEqual([
      { months: 6, windowBeforeDays: 30, windowAfterDays: 60 },
      { months: 12, windowBeforeDays: 60, windowAfterDays: 120 },
      { months: 24, windowBeforeDays: 90, windowAfterDays: 180 },
    ]);
  });

  it.each<[unknown, RegExp]>([
    [{ milestones: [] }, /at least one/],
    [{ milestones: [{ months: 0 }] }, /at least 1 month/],
    [{ milestones: [{ months: 6.5 }] }, /whole months/],
    [{ milestones: [{ months: 121 }] }, /at most 120 months/],
    [{ milestones: [{ months: 6 }, { months: 6 }] }, /listed twice/],
    [{ milestones: [{ months: 6, windowBeforeDays: -1 }] }, /cannot be negative/],
    [{ milestones: [{ months: 6, windowAfterDays: 120 }, { months: 9 }] }, /can overlap/],
    [{ milestones: [{ months: 3 }, { months: 4 }] }, /can overlap/],
  ])('rejects %j', (input, message) => {
    const r = RecallPolicySchema.safeParse(input);
    expect(r.success).toBe(false);
    expect(r.error?.issues.map((i) => i.message).join(' | ')).toMatch(message);
  });

  it('accepts 3, 6, 12, 24, 48 months with defaults', () => {
    expect(RecallPolicySchema.safeParse({ milestones: [3, 6, 12, 24, 48].map((months) => ({ months })) }).success).toBe(true);
  });

  it('the overlap bound holds for every completion day of a leap cycle', () => {
    // minimumDaysIn(k) must never exceed the real gap between milestone m and m + k.
    let day = '2023-01-01';
    for (let i = 0; i < 4 * 366; i++) {
      for (const [m, k] of [
        [1, 1],
        [5, 1],
        [6, 6],
        [11, 1],
        [12, 12],
        [24, 24],
      ] as const) {
        const gap = daysBetween(addMonthsClamped(day, m), addMonthsClamped(day, m + k));
        expect(gap).toBeGreaterThanOrEqual(minimumDaysIn(k));
      }
      day = addDaysTo(day, 1);
    }
  });
});

function existing(completion: string, statuses: ExistingVisit['status'][], policy = DEFAULT_RECALL_POLICY): ExistingVisit[] {
  return planVisits(completion, policy).map((v, i) => ({ ...v, id: `v${v.milestone}`, status: statuses[i] ?? 'planned' }));
}

describe('replan', () => {
  it('moves open visits, never the attended one, and keeps ended ones', () => {
    const visits = existing('2024-01-15', ['attended', 'invited', 'planned']);
    const r = replan(visits, '2024-02-10', DEFAULT_RECALL_POLICY);
    expect(r.add).toEqual([]);
    expect(r.keep).toEqual([{ id: 'v6', milestone: 6, status: 'attended', reason: 'attended' }]);
    expect(r.move).toEqual([
      {
        id: 'v12',
        milestone: 12,
        status: 'invited',
        from: { dueDate: '2025-01-15', windowStart: '2024-11-16', windowEnd: '2025-05-15' },
        to: { dueDate: '2025-02-10', windowStart: '2024-12-12', windowEnd: '2025-06-10' },
        reinvite: true,
      },
      {
        id: 'v24',
        milestone: 24,
        status: 'planned',
        from: { dueDate: '2026-01-15', windowStart: '2025-10-17', windowEnd: '2026-07-14' },
        to: { dueDate: '2026-02-10', windowStart: '2025-11-12', windowEnd: '2026-08-09' },
        reinvite: false,
      },
    ]);
  });

  it.each(['attended', 'missed', 'declined', 'cancelled', 'closed'] as const)('never moves a %s visit', (status) => {
    const visits = existing('2024-01-15', [status, status, status]);
    const r = replan(visits, '2023-06-01', DEFAULT_RECALL_POLICY);
    expect(r.move).toEqual([]);
    expect(r.add).toEqual([]);
    expect(r.keep.map((k) => k.reason)).toEqual(Array(3).fill(status === 'attended' ? 'attended' : 'ended'));
  });

  it.each(['planned', 'invited', 'confirmed'] as const)('moves a %s visit', (status) => {
    const r = replan(existing('2024-01-15', [status]), '2024-01-16', DEFAULT_RECALL_POLICY);
    expect(r.move.map((m) => m.id)).toContain('v6');
    expect(r.move.find((m) => m.id === 'v6')!.reinvite).toBe(status !== 'planned');
  });

  it('keeps everything when the date does not change', () => {
    const r = replan(existing('2024-01-15', ['planned', 'confirmed']), '2024-01-15', DEFAULT_RECALL_POLICY);
    expect(r.move).toEqual([]);
    expect(r.keep.every((k) => k.reason === 'unchanged')).toBe(true);
  });

  it('adds milestones the policy has and the case lacks', () => {
    const r = replan(existing('2024-01-15', ['attended', 'planned', 'planned']), '2024-01-15', withFour);
    expect(r.add).toEqual([{ milestone: 48, dueDate: '2028-01-15', windowStart: '2027-10-17', windowEnd: '2028-07-13' }]);
  });

  it('moves a visit whose milestone left the policy with its own window width, and deletes nothing', () => {
    const visits = existing('2024-01-15', ['planned', 'planned', 'planned', 'planned'], withFour);
    const r = replan(visits, '2024-03-15', DEFAULT_RECALL_POLICY);
    const m48 = r.move.find((m) => m.milestone === 48)!;
    expect(m48.to).toEqual({ dueDate: '2028-03-15', windowStart: '2027-12-16', windowEnd: '2028-09-11' });
    expect(r.move).toHaveLength(4);
  });

  it('lands moved visits at month ends too', () => {
    const r = replan(existing('2025-07-15', ['planned']), '2025-08-31', DEFAULT_RECALL_POLICY);
    expect(r.move[0]!.to.dueDate).toBe('2026-02-28');
  });
});

describe('past due', () => {
  const visit = { dueDate: '2024-07-15', windowStart: '2024-06-15', windowEnd: '2024-09-13' };
  it.each([
    ['2024-06-14', false, false],
    ['2024-06-15', false, true],
    ['2024-07-16', false, true], // due date passed, window open: not past due
    ['2024-09-13', false, true], // last day of the window
    ['2024-09-14', true, false],
  ])('on %s past due = %s, in window = %s', (today, pastDue, inWindow) => {
    expect(isPastDue(visit, today)).toBe(pastDue);
    expect(isInWindow(visit, today)).toBe(inWindow);
  });

  it('marks open visits with an ended window as missed, and nothing else', () => {
    const visits = existing('2022-01-15', ['attended', 'invited', 'planned']);
    visits.push({ id: 'x', milestone: 36, dueDate: '2025-01-15', windowStart: '2024-10-17', windowEnd: '2025-07-14', status: 'confirmed' });
    expect(markPastDue(visits, '2024-06-01')).toEqual([{ id: 'v12', from: 'invited', to: 'missed' }]);
    expect(markPastDue(visits, '2026-01-01').map((c) => c.id)).toEqual(['v12', 'v24', 'x']);
  });

  it('creates an imported case’s plan with ended windows as missed', () => {
    const visits = planImportedVisits('2023-01-10', DEFAULT_RECALL_POLICY, '2024-03-01');
    expect(visits.map((v) => [v.milestone, v.status])).toEqual([
      [6, 'missed'], // window ended 2023-09-08
      [12, 'planned'], // due 2024-01-10, window open until 2024-05-09
      [24, 'planned'],
    ]);
  });
});

import { describe, expect, it } from 'vitest';
import { ATTENDED_STATUSES, DUE_STATUSES, VISIT_STATUSES, followUpRate, monthsBetween, type RateVisit } from '@/lib/recall';
import { wilsonInterval } from '@/lib/stats';

const TODAY = '2026-06-01';
const visits: RateVisit[] = [
  { milestone: 6, dueDate: '2026-01-10', status: 'attended' },
  { milestone: 6, dueDate: '2026-01-20', status: 'missed' },
  { milestone: 6, dueDate: '2026-01-25', status: 'cancelled' }, // never counted
  { milestone: 12, dueDate: '2026-01-31', status: 'declined' },
  { milestone: 12, dueDate: '2026-02-28', status: 'attended' },
  { milestone: 12, dueDate: '2026-02-15', status: 'closed' },
  { milestone: 6, dueDate: '2026-05-20', status: 'invited' }, // past due, window open: pending
  { milestone: 6, dueDate: '2026-06-01', status: 'planned' }, // due today: not yet due
  { milestone: 24, dueDate: '2026-07-01', status: 'planned' }, // future
  { milestone: 24, dueDate: '2026-03-31', status: 'attended' },
];

const interval = (x: number, n: number) => {
  const w = wilsonInterval(x, n);
  return { lower: w.lower, upper: w.upper };
};

describe('follow-up rate: what counts', () => {
  it('counts every status but cancelled as due, and only attended as attended', () => {
    expect(DUE_STATUSES).toEqual(VISIT_STATUSES.filter((s) => s !== 'cancelled'));
    expect(ATTENDED_STATUSES).toEqual(['attended']);
  });

  it('overall: 3 attended of 7 due (hand count), 1 of them pending', () => {
    const { overall } = followUpRate(visits, TODAY);
    expect(overall).toEqual({ key: 'all', due: 7, attended: 3, pending: 1, rate: 3 / 7, interval: interval(3, 7) });
  });

  it('by milestone, ascending', () => {
    expect(followUpRate(visits, TODAY).byMilestone).toEqual([
      { key: 6, due: 3, attended: 1, pending: 1, rate: 1 / 3, interval: interval(1, 3) },
      { key: 12, due: 3, attended: 1, pending: 0, rate: 1 / 3, interval: interval(1, 3) },
      { key: 24, due: 1, attended: 1, pending: 0, rate: 1, interval: interval(1, 1) },
    ]);
  });

  it('by month of due date, ascending; a visit due today or later is in no month yet', () => {
    expect(followUpRate(visits, TODAY).byMonth).toEqual([
      { key: '2026-01', due: 3, attended: 1, pending: 0, rate: 1 / 3, interval: interval(1, 3) },
      { key: '2026-02', due: 2, attended: 1, pending: 0, rate: 1 / 2, interval: interval(1, 2) },
      { key: '2026-03', due: 1, attended: 1, pending: 0, rate: 1, interval: interval(1, 1) },
      { key: '2026-05', due: 1, attended: 0, pending: 1, rate: 0, interval: interval(0, 1) },
    ]);
  });

  it('the day after, the visit due on 1 June is due', () => {
    const r = followUpRate(visits, '2026-06-02');
    expect(r.overall.due).toBe(8);
    expect(r.overall.pending).toBe(2);
    expect(r.byMonth.at(-1)).toMatchObject({ key: '2026-06', due: 1, attended: 0 });
  });

  it('can leave pending visits out of the denominator; an emptied group is defined', () => {
    const r = followUpRate(visits, TODAY, { pending: 'exclude' });
    expect(r.overall).toMatchObject({ due: 6, attended: 3, pending: 1, rate: 0.5 });
    expect(r.byMilestone[0]).toMatchObject({ key: 6, due: 2, attended: 1, pending: 1, rate: 0.5 });
    expect(r.byMonth.at(-1)).toEqual({ key: '2026-05', due: 0, attended: 0, pending: 1, rate: null, interval: null });
  });

  it('reports asked-for milestones and months even when empty', () => {
    const r = followUpRate(visits, TODAY, { milestones: [6, 12, 24, 48], months: { from: '2025-12', to: '2026-06' } });
    expect(r.byMilestone.map((g) => g.key)).toEqual([6, 12, 24, 48]);
    expect(r.byMilestone[3]).toEqual({ key: 48, due: 0, attended: 0, pending: 0, rate: null, interval: null });
    expect(r.byMonth.map((g) => [g.key, g.due])).toEqual([
      ['2025-12', 0],
      ['2026-01', 3],
      ['2026-02', 2],
      ['2026-03', 1],
      ['2026-04', 0],
      ['2026-05', 1],
      ['2026-06', 0],
    ]);
    expect(r.byMonth[0]).toMatchObject({ rate: null, interval: null });
  });

  it('no visits at all: every group defined, nothing estimated', () => {
    expect(followUpRate([], TODAY)).toEqual({
      overall: { key: 'all', due: 0, attended: 0, pending: 0, rate: null, interval: null },
      byMilestone: [],
      byMonth: [],
    });
  });

  it('all and none attended: the Wilson bounds reach exactly 1 and 0', () => {
    const all = Array.from({ length: 5 }, () => ({ milestone: 12, dueDate: '2025-01-15', status: 'attended' as const }));
    const none = all.map((v) => ({ ...v, status: 'missed' as const }));
    expect(followUpRate(all, TODAY).overall).toMatchObject({ rate: 1, interval: { upper: 1 } });
    expect(followUpRate(none, TODAY).overall).toMatchObject({ rate: 0, interval: { lower: 0 } });
  });
});

describe('follow-up rate: the interval comes from lib/stats', () => {
  it('81 attended of 263 due gives Newcombe (1998)’s Wilson interval 0.2553 to 0.3662', () => {
    const many: RateVisit[] = Array.from({ length: 263 }, (_, i) => ({
      milestone: 12,
      dueDate: '2025-10-15',
      status: i < 81 ? 'attended' : i % 2 ? 'missed' : 'closed',
    }));
    const { overall } = followUpRate(many, TODAY);
    expect(overall.due).toBe(263);
    expect(overall.attended).toBe(81);
    expect(overall.interval!.lower).toBeCloseTo(0.2553, 4);
    expect(overall.interval!.upper).toBeCloseTo(0.3662, 4);
  });
});

describe('monthsBetween', () => {
  it('runs across the year end, both ends included', () => {
    expect(monthsBetween('2024-11', '2025-02')).toEqual(['2024-11', '2024-12', '2025-01', '2025-02']);
    expect(monthsBetween('2024-02', '2024-02')).toEqual(['2024-02']);
    expect(monthsBetween('2024-03', '2024-02')).toEqual([]);
  });
  it.each(['2024-13', '2024-1', '24-01', '2024-00'])('refuses %s', (bad) => {
    expect(() => monthsBetween(bad, '2025-01')).toThrow(RangeError);
  });
});

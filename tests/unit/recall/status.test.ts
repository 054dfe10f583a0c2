import { describe, expect, it } from 'vitest';
import {
  VISIT_STATUSES,
  VISIT_STATUS_LABELS,
  VISIT_TRANSITIONS,
  canTransition,
  isFinalStatus,
  isOpenStatus,
  isVisitStatus,
  type VisitStatus,
} from '@/lib/recall';

// The expected table, written out independently of the module (DESIGN.md's words for states).
const ALLOWED: [VisitStatus, VisitStatus][] = [
  ['planned', 'invited'],
  ['planned', 'confirmed'],
  ['planned', 'attended'],
  ['planned', 'missed'],
  ['planned', 'declined'],
  ['planned', 'cancelled'],
  ['planned', 'closed'],
  ['invited', 'confirmed'],
  ['invited', 'attended'],
  ['invited', 'missed'],
  ['invited', 'declined'],
  ['invited', 'cancelled'],
  ['invited', 'closed'],
  ['confirmed', 'invited'],
  ['confirmed', 'attended'],
  ['confirmed', 'missed'],
  ['confirmed', 'declined'],
  ['confirmed', 'cancelled'],
  ['confirmed', 'closed'],
  ['missed', 'invited'],
  ['missed', 'confirmed'],
  ['missed', 'attended'],
  ['missed', 'cancelled'],
  ['missed', 'closed'],
  ['declined', 'invited'],
  ['declined', 'confirmed'],
  ['declined', 'cancelled'],
  ['declined', 'closed'],
];

describe('visit status transitions', () => {
  it('uses the eight status words of the design', () => {
    expect(VISIT_STATUSES).toEqual(['planned', 'invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed']);
    expect(VISIT_STATUS_LABELS.closed).toMatch(/lost to follow-up/);
  });

  const all = VISIT_STATUSES.flatMap((from) => VISIT_STATUSES.map((to) => [from, to] as const));
  it.each(all)('%s → %s', (from, to) => {
    const expected = ALLOWED.some(([f, t]) => f === from && t === to);
    expect(canTransition(from, to)).toBe(expected);
  });

  it('has the happy path planned → invited → confirmed → attended', () => {
    expect(canTransition('planned', 'invited') && canTransition('invited', 'confirmed') && canTransition('confirmed', 'attended')).toBe(true);
  });

  it('never leaves attended, cancelled or closed', () => {
    expect(VISIT_STATUSES.filter(isFinalStatus)).toEqual(['attended', 'cancelled', 'closed']);
    expect(VISIT_TRANSITIONS.attended).toEqual([]);
  });

  it('every status can reach closed (lost to follow-up) unless it is final', () => {
    for (const s of VISIT_STATUSES) expect(canTransition(s, 'closed')).toBe(!isFinalStatus(s));
  });

  it('open statuses are planned, invited, confirmed', () => {
    expect(VISIT_STATUSES.filter(isOpenStatus)).toEqual(['planned', 'invited', 'confirmed']);
  });

  it('recognises status words', () => {
    expect(isVisitStatus('missed')).toBe(true);
    expect(isVisitStatus('lost')).toBe(false);
    expect(isVisitStatus(undefined)).toBe(false);
  });
});

import { describe, expect, it } from 'vitest';
import {
  CONTACT_STATUSES,
  FINAL_VISIT_STATUSES,
  NOT_FINAL_VISIT_STATUSES,
  OPEN_VISIT_STATUSES,
  VISIT_STATUSES,
  allowedMoves,
  canTransition,
  statusSql,
  transitionVisit,
  undoMissed,
  type TransitionRequest,
  type TransitionVisit,
  type VisitStatus,
} from '@/lib/recall';

// A 12-month visit: window 2026-12-01 … 2027-03-01, due 2027-01-15.
const base: TransitionVisit = { status: 'confirmed', milestone: 12, windowStart: '2026-12-01', windowEnd: '2027-03-01' };
const visit = (over: Partial<TransitionVisit>): TransitionVisit => ({ ...base, ...over });
const ask = (to: VisitStatus, on: string, over: Partial<TransitionRequest> = {}): TransitionRequest => ({ to, on, by: 'user', ...over });

describe('transitionVisit: one rule for every status change', () => {
  const cases: { name: string; visit: TransitionVisit; req: TransitionRequest; ok: boolean; refusal?: string; message?: RegExp; changes?: object }[] = [
    // The table
    { name: 'confirmed → attended inside the window', visit: visit({}), req: ask('attended', '2026-12-02'), ok: true, changes: { status: 'attended', missedReason: null } },
    { name: 'attended is final', visit: visit({ status: 'attended' }), req: ask('invited', '2027-01-01'), ok: false, refusal: 'not_allowed', message: /attended cannot become invited.*final/i },
    { name: 'declined → missed is not a move', visit: visit({ status: 'declined' }), req: ask('missed', '2027-01-01', { missedReason: 'no_show' }), ok: false, refusal: 'not_allowed', message: /From declined it can become: invited, confirmed, cancelled/ },
    // Not before the visit begins (issue 10: booked for 15 Jan 2027, attended on 2 Dec 2026)
    { name: 'booked for 15 Jan: not attended on 2 Dec', visit: visit({ bookedDate: '2027-01-15' }), req: ask('attended', '2026-12-02'), ok: false, refusal: 'not_started', message: /booked for 2027-01-15: it cannot be marked attended before then\. If the patient came early/ },
    { name: 'booked for 15 Jan: attended on 15 Jan', visit: visit({ bookedDate: '2027-01-15' }), req: ask('attended', '2027-01-15'), ok: true },
    { name: 'unbooked, window not begun: not attended', visit: visit({ status: 'planned' }), req: ask('attended', '2026-11-30'), ok: false, refusal: 'not_started', message: /window from 2026-12-01/ },
    { name: 'unbooked, first day of the window: attended', visit: visit({ status: 'planned' }), req: ask('attended', '2026-12-01'), ok: true },
    { name: 'due in 2030: not missed now', visit: visit({ status: 'planned', windowStart: '2030-01-01', windowEnd: '2030-06-01' }), req: ask('missed', '2026-12-02', { missedReason: 'no_show' }), ok: false, refusal: 'not_started' },
    { name: 'booked beyond the window: the scan does not mark it missed', visit: visit({ bookedDate: '2027-03-10' }), req: ask('missed', '2027-03-02', { by: 'system', missedReason: 'window_ended' }), ok: false, refusal: 'not_started' },
    { name: 'other moves need no start (invite a visit due in 2030)', visit: visit({ status: 'planned', windowStart: '2030-01-01', windowEnd: '2030-06-01' }), req: ask('invited', '2026-12-02'), ok: true, changes: { status: 'invited', reinviteNeeded: false } },
    // Missed with a reason
    { name: 'a person marks missed without a reason', visit: visit({}), req: ask('missed', '2027-01-20'), ok: false, refusal: 'reason_required', message: /no-show, cancelled late, unreachable/ },
    { name: 'a person cannot give the scan’s reason', visit: visit({}), req: ask('missed', '2027-01-20', { missedReason: 'window_ended' }), ok: false, refusal: 'reason_required' },
    { name: 'no-show is kept with the day and the status before', visit: visit({}), req: ask('missed', '2027-01-20', { missedReason: 'no_show' }), ok: true, changes: { status: 'missed', missedReason: 'no_show', missedOn: '2027-01-20', missedFrom: 'confirmed' } },
    { name: 'the scan marks missed with window_ended, nothing to undo', visit: visit({ status: 'invited' }), req: ask('missed', '2027-03-02', { by: 'system', missedReason: 'window_ended' }), ok: true, changes: { missedReason: 'window_ended', missedFrom: null } },
    { name: 'leaving missed clears the reason', visit: visit({ status: 'missed', missedReason: 'no_show', missedOn: '2027-01-20', missedFrom: 'confirmed' }), req: ask('attended', '2027-01-22'), ok: true, changes: { status: 'attended', missedReason: null, missedOn: null, missedFrom: null } },
    // Flags
    { name: 'confirmed clears "invite again"', visit: visit({ status: 'invited' }), req: ask('confirmed', '2026-11-01', { by: 'patient' }), ok: true, changes: { status: 'confirmed', reinviteNeeded: false } },
  ];
  it.each(cases)('$name', (c) => {
    const r = transitionVisit(c.visit, c.req);
    expect(r.ok).toBe(c.ok);
    if (!r.ok) {
      expect(r.refusal).toBe(c.refusal);
      if (c.message) expect(r.message).toMatch(c.message);
    } else if (c.changes) expect(r.changes).toMatchObject(c.changes);
  });

  it('refuses exactly what the table refuses, for every pair, once the visit has begun', () => {
    for (const from of VISIT_STATUSES) {
      for (const to of VISIT_STATUSES) {
        if (from === to) continue;
        const r = transitionVisit(visit({ status: from }), ask(to, '2027-01-20', { missedReason: 'unreachable' }));
        expect([from, to, r.ok]).toEqual([from, to, canTransition(from, to)]);
      }
    }
  });
});

describe('undoMissed: the same day only, and only a person’s mark', () => {
  const missed = visit({ status: 'missed', missedReason: 'cancelled_late', missedOn: '2027-01-20', missedFrom: 'confirmed' });
  it.each([
    { name: 'same day → back to confirmed', v: missed, today: '2027-01-20', ok: true, status: 'confirmed' },
    { name: 'next day → refused', v: missed, today: '2027-01-21', ok: false, message: /only the same day/ },
    { name: 'marked by the scan → refused', v: visit({ status: 'missed', missedReason: 'window_ended', missedOn: '2027-03-02' }), today: '2027-03-02', ok: false, message: /not by a person/ },
    { name: 'not missed → refused', v: visit({}), today: '2027-01-20', ok: false, message: /nothing to undo/ },
  ])('$name', ({ v, today, ok, status, message }) => {
    const r = undoMissed(v, today);
    expect(r.ok).toBe(ok);
    if (r.ok) expect(r.changes).toEqual({ status, missedReason: null, missedOn: null, missedFrom: null });
    else expect(r.message).toMatch(message!);
  });
});

describe('what a screen offers, and the lists SQL is built from', () => {
  it('a visit due in 2030 offers neither attended nor missed; one in its window offers both', () => {
    expect(allowedMoves(visit({ status: 'planned', windowStart: '2030-01-01', windowEnd: '2030-06-01' }), '2026-12-02')).toEqual(['invited', 'confirmed', 'declined', 'cancelled', 'closed']);
    expect(allowedMoves(visit({ status: 'planned' }), '2026-12-02')).toEqual(['invited', 'confirmed', 'attended', 'missed', 'declined', 'cancelled', 'closed']);
  });

  it('lists: open, contact, final and not final', () => {
    expect(OPEN_VISIT_STATUSES).toEqual(['planned', 'invited', 'confirmed']);
    expect(CONTACT_STATUSES).toEqual(['planned', 'invited']);
    expect(FINAL_VISIT_STATUSES).toEqual(['attended', 'cancelled', 'closed']);
    expect(NOT_FINAL_VISIT_STATUSES).toEqual(['planned', 'invited', 'confirmed', 'missed', 'declined']);
  });

  it('statusSql quotes known words only', () => {
    expect(statusSql(CONTACT_STATUSES)).toBe(`('planned', 'invited')`);
    expect(() => statusSql(["x') or true --" as VisitStatus])).toThrow(/no visit status/);
    expect(() => statusSql([])).toThrow();
  });
});

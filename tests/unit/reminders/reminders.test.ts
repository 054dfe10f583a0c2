import { describe, expect, it } from 'vitest';
import {
  CONTACT_STATUSES,
  DEFAULT_RECALL_POLICY,
  DEFAULT_REMINDER_POLICY,
  RecallPolicySchema,
  REMINDER_STEPS,
  ReminderPolicySchema,
  VISIT_STATUSES,
  lastNoticeOutsideWindows,
  nextStepNow,
  quietDelayMs,
  reminderJobId,
  shouldCloseAsLost,
  stepDates,
  stepDue,
  stepsEntering,
  unansweredAttempts,
  type ReminderStep,
  type ReminderVisit,
  type SentStep,
  type VisitStatus,
} from '@/lib/recall';
import { addDaysTo } from '@/lib/registry/calendar-date';

const P = DEFAULT_REMINDER_POLICY; // invitation 21 days before, reply wait 10 days, last notice 14 days after

function visit(dueDate: string, over: Partial<ReminderVisit> = {}): ReminderVisit {
  return { id: 'v1', status: 'planned', dueDate, windowEnd: addDaysTo(dueDate, 60), recallContactConsent: true, ...over };
}
const sent = (...steps: [ReminderStep, string][]): SentStep[] => steps.map(([step, on]) => ({ step, on }));

describe('stepDates', () => {
  it.each([
    ['2026-03-15', '2026-02-22', '2026-03-29'],
    ['2024-03-21', '2024-02-29', '2024-04-04'], // leap day
    ['2023-03-21', '2023-02-28', '2023-04-04'], // common year
    ['2025-01-21', '2024-12-31', '2025-02-04'], // across the year end
    ['2024-02-15', '2024-01-25', '2024-02-29'], // last notice on the leap day
    ['2023-02-15', '2023-01-25', '2023-03-01'],
    ['2025-12-31', '2025-12-10', '2026-01-14'],
  ])('due %s: invitation from %s, last notice from %s', (due, invitation, lastNotice) => {
    expect(stepDates(due, P)).toEqual({ invitation, lastNotice });
  });
});

describe('stepDue: the first invitation (due − 3 weeks)', () => {
  it.each([
    // due date, today, expected
    ['2026-03-15', '2026-02-21', null], // day before
    ['2026-03-15', '2026-02-22', 'invitation'], // on
    ['2026-03-15', '2026-02-23', 'invitation'], // after (a missed scan catches up)
    ['2024-03-21', '2024-02-28', null], // leap year: the threshold is 29 February
    ['2024-03-21', '2024-02-29', 'invitation'],
    ['2024-03-21', '2024-03-01', 'invitation'],
    ['2023-03-21', '2023-02-27', null], // common year: 28 February
    ['2023-03-21', '2023-02-28', 'invitation'],
    ['2023-03-21', '2023-03-01', 'invitation'],
    ['2025-01-21', '2024-12-30', null], // month and year end
    ['2025-01-21', '2024-12-31', 'invitation'],
    ['2025-01-21', '2025-01-01', 'invitation'],
  ] as const)('due %s, today %s → %s', (due, today, expected) => {
    expect(stepDue(visit(due), [], P, today)).toBe(expected);
  });

  it('invites a planned visit late rather than never: first contact is always the invitation', () => {
    const due = '2026-03-15';
    expect(stepDue(visit(due), [], P, addDaysTo(due, 30))).toBe('invitation'); // past the last-notice day, window still open
  });
});

describe('stepDue: the second invitation (invitation + 10 days, no reply)', () => {
  it.each([
    // invitation sent on, today, expected
    ['2024-02-20', '2024-02-29', null], // day before, leap year (20 Feb + 10 = 1 March)
    ['2024-02-20', '2024-03-01', 'second_invitation'],
    ['2024-02-20', '2024-03-02', 'second_invitation'],
    ['2023-02-20', '2023-03-01', null], // common year: 20 Feb + 10 = 2 March
    ['2023-02-20', '2023-03-02', 'second_invitation'],
    ['2023-02-20', '2023-03-03', 'second_invitation'],
    ['2025-01-31', '2025-02-09', null], // month end
    ['2025-01-31', '2025-02-10', 'second_invitation'],
    ['2025-01-31', '2025-02-11', 'second_invitation'],
  ] as const)('invited %s, today %s → %s', (invitedOn, today, expected) => {
    const due = addDaysTo(invitedOn, 21);
    expect(stepDue(visit(due, { status: 'invited' }), sent(['invitation', invitedOn]), P, today)).toBe(expected);
  });
});

describe('stepDue: the last notice (due + 14 days)', () => {
  it.each([
    ['2026-01-31', '2026-02-13', null],
    ['2026-01-31', '2026-02-14', 'last_notice'],
    ['2026-01-31', '2026-02-15', 'last_notice'],
    ['2024-02-15', '2024-02-28', null], // leap year: the day is 29 February
    ['2024-02-15', '2024-02-29', 'last_notice'],
    ['2024-02-15', '2024-03-01', 'last_notice'],
    ['2023-02-15', '2023-02-28', null], // common year: 1 March
    ['2023-02-15', '2023-03-01', 'last_notice'],
    ['2025-12-31', '2026-01-13', null], // across the year end
    ['2025-12-31', '2026-01-14', 'last_notice'],
  ] as const)('due %s, today %s → %s', (due, today, expected) => {
    const history = sent(['invitation', addDaysTo(due, -21)], ['second_invitation', addDaysTo(due, -11)]);
    expect(stepDue(visit(due, { status: 'invited' }), history, P, today)).toBe(expected);
  });

  it('replaces a second invitation that is no longer worth sending', () => {
    const due = '2026-03-15';
    // Invited on the due date: the second would be due+10, the last notice due+14.
    const history = sent(['invitation', due]);
    const v = visit(due, { status: 'invited' });
    expect(stepDue(v, history, P, addDaysTo(due, 10))).toBe('second_invitation');
    // Invited at due+5: by the time the wait is over (due+15), the last notice is due instead.
    const late = sent(['invitation', addDaysTo(due, 5)]);
    expect(stepDue(v, late, P, addDaysTo(due, 14))).toBeNull(); // still within the reply wait
    expect(stepDue(v, late, P, addDaysTo(due, 15))).toBe('last_notice');
  });
});

describe('stepDue: who gets nothing', () => {
  const due = '2026-03-15';
  const days = [addDaysTo(due, -21), addDaysTo(due, -11), addDaysTo(due, 14), addDaysTo(due, 40)];

  it.each(VISIT_STATUSES.filter((s) => !CONTACT_STATUSES.includes(s)))('a %s visit', (status) => {
    for (const today of days) {
      expect(stepDue(visit(due, { status }), [], P, today)).toBeNull();
      expect(stepDue(visit(due, { status }), sent(['invitation', days[0]!]), P, today)).toBeNull();
    }
  });

  it('only planned and invited visits still need contact', () => {
    expect(CONTACT_STATUSES).toEqual(['planned', 'invited']);
  });

  it('a patient without recall-contact consent, on any day', () => {
    for (const today of days) {
      expect(stepDue(visit(due, { recallContactConsent: false }), [], P, today)).toBeNull();
      expect(stepDue(visit(due, { status: 'invited', recallContactConsent: false }), sent(['invitation', days[0]!]), P, today)).toBeNull();
    }
  });

  it('a visit whose window has ended (day after the window end), but not on its last day', () => {
    const v = visit(due, { status: 'invited', windowEnd: addDaysTo(due, 20) });
    const history = sent(['invitation', addDaysTo(due, -21)], ['second_invitation', addDaysTo(due, -11)]);
    expect(stepDue(v, history, P, addDaysTo(due, 20))).toBe('last_notice');
    expect(stepDue(v, history, P, addDaysTo(due, 21))).toBeNull();
    expect(stepDue(visit(due, { windowEnd: addDaysTo(due, 20) }), [], P, addDaysTo(due, 21))).toBeNull();
  });

  it('no step twice: after the last notice nothing follows', () => {
    const history = sent(['invitation', addDaysTo(due, -21)], ['second_invitation', addDaysTo(due, -11)], ['last_notice', addDaysTo(due, 14)]);
    for (let d = -21; d <= 60; d++) expect(stepDue(visit(due, { status: 'invited' }), history, P, addDaysTo(due, d))).toBeNull();
  });

  it('a patient who replied after the last message; the desk’s next message starts it again', () => {
    const history = sent(['invitation', addDaysTo(due, -21)]);
    const v = visit(due, { status: 'invited', lastReplyOn: addDaysTo(due, -18) });
    expect(stepDue(v, history, P, addDaysTo(due, -11))).toBeNull();
    expect(stepDue(v, history, P, addDaysTo(due, 14))).toBeNull();
    // A reply on the same day as the message counts as a reply to it.
    expect(stepDue({ ...v, lastReplyOn: addDaysTo(due, -21) }, history, P, addDaysTo(due, -11))).toBeNull();
    // The desk wrote again after the reply: the sequence goes on from there.
    const again = [...history, ...sent(['second_invitation', addDaysTo(due, -5)])];
    expect(stepDue(v, again, P, addDaysTo(due, 14))).toBe('last_notice');
  });

  it('an invited visit with no message on record gets the invitation first, never a last notice as its first message', () => {
    const v = visit(due, { status: 'invited' });
    expect(stepDue(v, [], P, addDaysTo(due, -22))).toBeNull();
    expect(stepDue(v, [], P, addDaysTo(due, -21))).toBe('invitation');
    expect(stepDue(v, [], P, addDaysTo(due, 14))).toBe('invitation');
    expect(stepDue(v, [], P, addDaysTo(due, 40))).toBe('invitation');
    // … and the last notice only after the reply wait.
    expect(stepDue(v, sent(['invitation', addDaysTo(due, 14)]), P, addDaysTo(due, 23))).toBeNull();
    expect(stepDue(v, sent(['invitation', addDaysTo(due, 14)]), P, addDaysTo(due, 24))).toBe('last_notice');
  });

  it('a proposal starts a round: it takes the invitation’s place, and the next step waits the reply time', () => {
    const v = visit(due, { status: 'invited' });
    const round = sent(['proposal', addDaysTo(due, -20)]);
    expect(stepDue(v, round, P, addDaysTo(due, -20))).toBeNull();
    expect(stepDue(v, round, P, addDaysTo(due, -11))).toBeNull();
    expect(stepDue(v, round, P, addDaysTo(due, -10))).toBe('second_invitation');
    expect(nextStepNow(v, round, P, addDaysTo(due, -19))).toBe('second_invitation');
  });
});

/** Runs the scan every day from well before the due date to the window end and records what went out. */
function simulate(v: ReminderVisit, policy = P, from = -120) {
  const history: SentStep[] = [];
  for (let d = from; ; d++) {
    const today = addDaysTo(v.dueDate, d);
    if (today > v.windowEnd) break;
    const step = stepDue(v, history, policy, today);
    if (step) {
      history.push({ step, on: today });
      if (v.status === 'planned') v = { ...v, status: 'invited' };
    }
  }
  return history;
}

describe('a daily scan over a whole visit', () => {
  it('sends each step once, on its day, for every due date of a leap year and the next', () => {
    for (let d = 0; d < 366 + 365; d++) {
      const due = addDaysTo('2024-01-01', d);
      expect(simulate(visit(due))).toEqual(
        sent(['invitation', addDaysTo(due, -21)], ['second_invitation', addDaysTo(due, -11)], ['last_notice', addDaysTo(due, 14)]),
      );
    }
  }, 30_000); // about 150,000 scan days: 3 s alone, more on a shared machine under load

  it('keeps ten days between messages when the visit was planned late', () => {
    const due = '2024-02-29';
    // The scan first sees the visit on due − 3: invitation then, second at due + 7, last notice at due + 17.
    expect(simulate(visit(due), P, -3)).toEqual(
      sent(['invitation', '2024-02-26'], ['second_invitation', '2024-03-07'], ['last_notice', '2024-03-17']),
    );
  });

  it('follows a practice’s own policy', () => {
    const policy = ReminderPolicySchema.parse({ invitationWeeksBefore: 6, secondInvitationAfterDays: 14, lastNoticeDaysAfterDue: 30 });
    const due = '2025-03-31';
    expect(simulate(visit(due), policy)).toEqual(
      sent(['invitation', '2025-02-17'], ['second_invitation', '2025-03-03'], ['last_notice', '2025-04-30']),
    );
  });
});

describe('stepsEntering', () => {
  it('gives each visit its step for today, in order, and skips the rest', () => {
    const today = '2026-03-01';
    const visits: ReminderVisit[] = [
      visit('2026-03-22', { id: 'a' }), // invitation today (22 − 21 = 1 March)
      visit('2026-03-23', { id: 'b' }), // not yet
      visit('2026-03-12', { id: 'c', status: 'invited' }), // invited 19 Feb: second today
      visit('2026-02-15', { id: 'd', status: 'invited' }), // last notice today (15 Feb + 14)
      visit('2026-03-22', { id: 'e', recallContactConsent: false }),
      visit('2026-03-22', { id: 'f', status: 'confirmed' }),
      visit('2026-03-22', { id: 'g' }), // already queued today by an earlier scan
    ];
    const history = [
      { visitId: 'c', step: 'invitation' as const, on: '2026-02-19' },
      { visitId: 'd', step: 'invitation' as const, on: '2026-01-25' },
      { visitId: 'd', step: 'second_invitation' as const, on: '2026-02-04' },
      { visitId: 'g', step: 'invitation' as const, on: today },
    ];
    expect(stepsEntering(visits, history, P, today)).toEqual([
      { visitId: 'a', step: 'invitation' },
      { visitId: 'c', step: 'second_invitation' },
      { visitId: 'd', step: 'last_notice' },
    ]);
    // The same scan again, with what it queued recorded, queues nothing.
    const after = [...history, { visitId: 'a', step: 'invitation' as const, on: today }, { visitId: 'c', step: 'second_invitation' as const, on: today }, { visitId: 'd', step: 'last_notice' as const, on: today }];
    expect(stepsEntering(visits, after, P, today)).toEqual([]);
  });

  it('works with numeric ids too', () => {
    expect(stepsEntering([{ ...visit('2026-03-22'), id: 7 }], [], P, '2026-03-01')).toEqual([{ visitId: 7, step: 'invitation' }]);
  });
});

describe('nextStepNow (the desk’s "send now")', () => {
  const due = '2026-03-15';
  it.each([
    ['planned, nothing sent, months early', 'planned', [], '2025-12-01', 'invitation'],
    ['invited by phone, nothing sent', 'invited', [], '2026-03-01', 'invitation'],
    ['a proposal sent: counts as the invitation', 'invited', [['proposal', '2026-02-28']], '2026-03-01', 'second_invitation'],
    ['invitation sent yesterday', 'invited', [['invitation', '2026-02-28']], '2026-03-01', 'second_invitation'],
    ['second sent', 'invited', [['invitation', '2026-02-22'], ['second_invitation', '2026-03-04']], '2026-03-05', 'last_notice'],
    ['last notice already due: skips the second', 'invited', [['invitation', '2026-02-22']], '2026-03-29', 'last_notice'],
    ['everything sent', 'invited', [['invitation', '2026-02-22'], ['second_invitation', '2026-03-04'], ['last_notice', '2026-03-29']], '2026-03-30', null],
    ['confirmed', 'confirmed', [], '2026-03-01', null],
    ['missed', 'missed', [], '2026-03-01', null],
  ] as const)('%s → %s', (_label, status, history, today, expected) => {
    expect(nextStepNow(visit(due, { status }), sent(...(history as unknown as [ReminderStep, string][])), P, today)).toBe(expected);
  });

  it('never without consent', () => {
    expect(nextStepNow(visit(due, { recallContactConsent: false }), [], P, '2026-03-01')).toBeNull();
  });
});

describe('reminderJobId', () => {
  const uuid = '3f2b8c1e-9a4d-4e7b-8c2a-1d5e6f7a8b9c';
  it.each(REMINDER_STEPS)('%s: deterministic, no ":" and not an integer (BullMQ custom id rules)', (step) => {
    const id = reminderJobId(uuid, step);
    expect(id).toBe(`reminder-${uuid}-${step}`);
    expect(reminderJobId(uuid, step)).toBe(id);
    expect(id).not.toContain(':');
    expect(`${parseInt(id, 10)}`).not.toBe(id); // BullMQ's own test for integer ids
  });

  it('differs by visit, by step and by round; round 0 keeps the first form', () => {
    const ids = new Set(['a', 'b'].flatMap((v) => REMINDER_STEPS.flatMap((s) => [0, 1, 2].map((r) => reminderJobId(v, s, r)))));
    expect(ids.size).toBe(2 * REMINDER_STEPS.length * 3);
    expect(reminderJobId(uuid, 'invitation', 0)).toBe(`reminder-${uuid}-invitation`);
    expect(reminderJobId(uuid, 'proposal', 3)).toBe(`reminder-${uuid}-proposal-r3`);
    for (const bad of [-1, 1.5, 40_000]) expect(() => reminderJobId(uuid, 'invitation', bad)).toThrow(RangeError);
  });

  it('is not an integer even for numeric visit ids', () => {
    const id = reminderJobId('12345', 'invitation');
    expect(`${parseInt(id, 10)}`).not.toBe(id);
  });

  it.each(['', 'a:b', 'a b', 'x'.repeat(65), 'ü'])('refuses the visit id %j', (bad) => {
    expect(() => reminderJobId(bad, 'invitation')).toThrow(RangeError);
  });

  it('refuses an unknown step', () => {
    expect(() => reminderJobId('a', 'reminder' as ReminderStep)).toThrow(RangeError);
  });
});

describe('unansweredAttempts', () => {
  const attempts = [{ on: '2024-02-19' }, { on: '2024-02-29' }, { on: '2024-03-24' }];
  it.each([
    ['2024-02-28', null, 0], // first wait ends 29 Feb (leap year)
    ['2024-02-29', null, 1],
    ['2024-03-09', null, 1], // 29 Feb + 10 = 10 March
    ['2024-03-10', null, 2],
    ['2024-03-03', null, 1],
    ['2024-04-02', null, 2],
    ['2024-04-03', null, 3],
    ['2024-04-03', '2024-02-19', 2], // a reply on the day of the first message answers it
    ['2024-04-03', '2024-02-20', 2],
    ['2024-04-03', '2024-02-29', 1],
    ['2024-04-03', '2024-03-30', 0],
  ] as const)('today %s, last reply %s → %i', (today, lastReplyOn, n) => {
    expect(unansweredAttempts(attempts, P, today, lastReplyOn)).toBe(n);
  });
});

describe('shouldCloseAsLost', () => {
  const cases = VISIT_STATUSES.flatMap((status) => [2, 3, 4].map((n) => [status, n] as const));
  it.each(cases)('%s with %i unanswered (policy 3)', (status, n) => {
    expect(shouldCloseAsLost({ status }, n, P)).toBe(status === 'missed' && n >= 3);
  });

  it('follows the practice’s number', () => {
    const one = ReminderPolicySchema.parse({ lostAfterUnansweredAttempts: 1 });
    expect(shouldCloseAsLost({ status: 'missed' }, 0, one)).toBe(false);
    expect(shouldCloseAsLost({ status: 'missed' }, 1, one)).toBe(true);
    expect(shouldCloseAsLost({ status: 'invited' as VisitStatus }, 9, one)).toBe(false);
  });
});

describe('lastNoticeOutsideWindows', () => {
  it('is empty for the default policies (last notice at +14, windows end at +60 or later)', () => {
    expect(lastNoticeOutsideWindows(P, DEFAULT_RECALL_POLICY)).toEqual([]);
  });
  it('names the milestones whose window closes before the last notice', () => {
    const recall = RecallPolicySchema.parse({ milestones: [{ months: 3, windowAfterDays: 13 }, { months: 6, windowAfterDays: 14 }, { months: 12 }] });
    expect(lastNoticeOutsideWindows(P, recall)).toEqual([3]);
  });
});

describe('quietDelayMs', () => {
  const night = { start: '20:00', end: '08:00' };
  it.each([
    ['2026-01-10T19:59:59.000Z', 0],
    ['2026-01-10T20:00:00.000Z', 12 * 3600_000], // start is quiet
    ['2026-01-10T23:30:00.000Z', 8.5 * 3600_000],
    ['2026-01-11T00:00:00.000Z', 8 * 3600_000],
    ['2026-01-11T07:59:00.000Z', 60_000],
    ['2026-01-11T07:59:59.250Z', 750], // milliseconds count
    ['2026-01-11T08:00:00.000Z', 0], // end is not
  ])('UTC, 20:00–08:00, at %s → %i ms', (iso, ms) => {
    expect(quietDelayMs(night, new Date(iso), 'UTC')).toBe(ms);
  });

  it('uses the practice’s time zone (London in summer is UTC+1)', () => {
    expect(quietDelayMs(night, new Date('2026-07-01T18:59:00Z'), 'Europe/London')).toBe(0); // 19:59 BST
    expect(quietDelayMs(night, new Date('2026-07-01T19:00:00Z'), 'Europe/London')).toBe(12 * 3600_000); // 20:00 BST
    expect(quietDelayMs(night, new Date('2026-01-10T19:00:00Z'), 'Europe/London')).toBe(0); // 19:00 GMT
  });

  it('handles quiet hours within one day, and none', () => {
    const lunch = { start: '12:00', end: '13:30' };
    expect(quietDelayMs(lunch, new Date('2026-01-10T11:59:00Z'), 'UTC')).toBe(0);
    expect(quietDelayMs(lunch, new Date('2026-01-10T12:00:00Z'), 'UTC')).toBe(90 * 60_000);
    expect(quietDelayMs(lunch, new Date('2026-01-10T13:30:00Z'), 'UTC')).toBe(0);
    expect(quietDelayMs(undefined, new Date('2026-01-10T23:00:00Z'), 'UTC')).toBe(0);
  });
});

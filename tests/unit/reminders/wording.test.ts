import { describe, expect, it } from 'vitest';
import { DEFAULT_REMINDER_POLICY, messageWording, stepDue, type ReminderVisit } from '@/lib/recall';
import { addDaysTo } from '@/lib/registry/calendar-date';

const P = DEFAULT_REMINDER_POLICY; // invitation 3 weeks before the due date

describe('messageWording: which words a message uses', () => {
  it.each([
    // step, due date, day queued, wording
    ['invitation', '2027-06-15', '2026-12-02', 'invitation_early'], // "send now" in December for June: never "nearly time"
    ['invitation', '2026-12-24', '2026-12-02', 'invitation_early'], // 22 days ahead: one day before the usual invitation day
    ['invitation', '2026-12-23', '2026-12-02', 'invitation'], // on the usual day (due − 21)
    ['invitation', '2026-12-02', '2026-12-02', 'invitation'], // due today is not yet overdue
    ['invitation', '2026-12-01', '2026-12-02', 'invitation_overdue'], // due yesterday
    ['invitation', '2026-06-15', '2026-12-02', 'invitation_overdue'],
    ['second_invitation', '2026-12-20', '2026-12-02', 'second_invitation'],
    ['second_invitation', '2026-11-20', '2026-12-02', 'second_invitation_overdue'],
    ['last_notice', '2026-11-01', '2026-12-02', 'last_notice'],
    ['proposal', '2026-12-20', '2026-12-02', 'proposal'], // minutes after the invitation: its own words
    ['proposal', '2026-10-20', '2026-12-02', 'proposal'],
  ] as const)('%s due %s, queued %s → %s', (step, due, day, expected) => {
    expect(messageWording(step, due, day, P)).toBe(expected);
  });

  it('follows the practice’s invitation weeks', () => {
    expect(messageWording('invitation', '2027-01-20', '2026-12-02', { invitationWeeksBefore: 8 })).toBe('invitation');
    expect(messageWording('invitation', '2027-01-20', '2026-12-02', { invitationWeeksBefore: 3 })).toBe('invitation_early');
  });

  it('an overdue visit’s first message is the invitation, worded as overdue (never "Last notice")', () => {
    const today = '2026-12-02';
    for (const daysLate of [1, 14, 15, 40, 100]) {
      const due = addDaysTo(today, -daysLate);
      for (const status of ['planned', 'invited'] as const) {
        const v: ReminderVisit = { id: 'v', status, dueDate: due, windowEnd: addDaysTo(due, 120), recallContactConsent: true };
        const step = stepDue(v, [], P, today);
        expect(step).toBe('invitation');
        expect(messageWording(step!, due, today, P)).toBe('invitation_overdue');
      }
    }
  });
});

import { describe, expect, it } from 'vitest';
import { DEFAULT_REMINDER_POLICY, REMINDER_POLICY_BOUNDS, ReminderPolicySchema } from '@/lib/schemas/reminder-policy';

const messages = (input: unknown) => {
  const r = ReminderPolicySchema.safeParse(input);
  return r.success ? [] : r.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`);
};

describe('reminder policy schema', () => {
  it('fills the defaults (3 weeks, 10 days, 14 days, 3 attempts; common practice, Lamina’s choice)', () => {
    expect(DEFAULT_REMINDER_POLICY).toEqual({
      invitationWeeksBefore: 3,
      secondInvitationAfterDays: 10,
      lastNoticeDaysAfterDue: 14,
      lostAfterUnansweredAttempts: 3,
    });
    expect(ReminderPolicySchema.parse({ invitationWeeksBefore: 4 })).toMatchObject({ invitationWeeksBefore: 4, secondInvitationAfterDays: 10 });
  });

  const fields = Object.entries(REMINDER_POLICY_BOUNDS) as [keyof typeof REMINDER_POLICY_BOUNDS, { min: number; max: number }][];
  describe.each(fields)('%s', (field, { min, max }) => {
    it.each([
      [min - 1, false],
      [min, true],
      [max, true],
      [max + 1, false],
    ])('%i accepted: %s', (value, ok) => {
      // Keep the cross-field rule out of the way: a short reply wait, early invitation, late notice.
      const base = { invitationWeeksBefore: 12, secondInvitationAfterDays: 3, lastNoticeDaysAfterDue: 90 };
      const r = ReminderPolicySchema.safeParse({ ...base, [field]: value });
      expect(r.success).toBe(ok);
      if (!r.success) {
        expect(r.error.issues[0]!.path).toEqual([field]);
        expect(r.error.issues[0]!.message).toContain(`between ${min} and ${max}`);
      }
    });

    it('refuses fractions and text with a plain message', () => {
      expect(messages({ [field]: min + 0.5 }).join()).toMatch(/whole number/);
      expect(messages({ [field]: String(min) }).join()).toMatch(/whole number/);
    });
  });

  it('refuses a second invitation that could not come before the last notice', () => {
    // First invitation 1 week before, last notice 1 day after: 8 days apart; a 10-day wait never fits.
    const m = messages({ invitationWeeksBefore: 1, lastNoticeDaysAfterDue: 1, secondInvitationAfterDays: 10 });
    expect(m).toHaveLength(1);
    expect(m[0]).toMatch(/^secondInvitationAfterDays: The second invitation \(10 days after the first\) would not come before the last notice \(8 days/);
    expect(ReminderPolicySchema.safeParse({ invitationWeeksBefore: 1, lastNoticeDaysAfterDue: 1, secondInvitationAfterDays: 7 }).success).toBe(true);
    expect(ReminderPolicySchema.safeParse({ invitationWeeksBefore: 1, lastNoticeDaysAfterDue: 1, secondInvitationAfterDays: 8 }).success).toBe(false);
  });

  it.each([
    [{ start: '20:00', end: '08:00' }, true],
    [{ start: '12:30', end: '13:30' }, true],
    [{ start: '00:00', end: '23:59' }, true],
    [{ start: '24:00', end: '08:00' }, false],
    [{ start: '8:00', end: '20:00' }, false],
    [{ start: '20:00', end: '20:00' }, false],
    [{ start: '20:00' }, false],
  ])('quiet hours %j accepted: %s', (quietHours, ok) => {
    expect(ReminderPolicySchema.safeParse({ quietHours }).success).toBe(ok);
  });

  it('says what is wrong with quiet hours', () => {
    expect(messages({ quietHours: { start: '20:00', end: '20:00' } })).toEqual(['quietHours.end: Quiet hours must start and end at different times.']);
    expect(messages({ quietHours: { start: '7pm', end: '08:00' } })[0]).toMatch(/HH:MM on the 24-hour clock/);
  });
});

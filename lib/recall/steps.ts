/**
 * The reminder steps and their names. A module of its own, without zod or the policy schemas, so
 * that client components (the desk) can show the names without loading the schemas
 * (First Load JS); lib/recall/reminders.ts re-exports them.
 */

export const REMINDER_STEPS = ['invitation', 'second_invitation', 'last_notice', 'proposal'] as const;
export type ReminderStep = (typeof REMINDER_STEPS)[number];

export const REMINDER_STEP_LABELS: Record<ReminderStep, string> = {
  invitation: 'Invitation',
  second_invitation: 'Second invitation',
  last_notice: 'Last notice',
  proposal: 'Proposed time',
};

export function isReminderStep(value: unknown): value is ReminderStep {
  return typeof value === 'string' && (REMINDER_STEPS as readonly string[]).includes(value);
}

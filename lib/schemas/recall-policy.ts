/**
 * A practice's recall policy: the follow-up milestones (months after the completion date) and,
 * for each, the window in days before and after its due date within which a review counts for it.
 *
 * Default milestones 6, 12 and 24 months; a practice may add more (48 months follows the ESE 2006
 * quality guidelines: review at least at one year, and up to four years when healing is incomplete).
 *
 * Default windows (Lamina's own choice, modelled on common practice in follow-up clinics and outcome
 * studies: a review is accepted somewhat early and rather more late, and the span widens with the
 * interval): 5 days before per month of milestone (at most 90) and 10 days after per month (at most
 * 180) — 6 months: −30/+60, 12 months: −60/+120, 24 and 48 months: −90/+180. Not a published standard.
 *
 * Windows of consecutive milestones may not overlap, so an attended review always belongs to one visit.
 */
import { z } from 'zod';

export const MAX_MILESTONE_MONTHS = 120;

/** The default window for a milestone of `months` months, in days before / after its due date. */
export function defaultWindow(months: number): { windowBeforeDays: number; windowAfterDays: number } {
  return { windowBeforeDays: Math.min(90, months * 5), windowAfterDays: Math.min(180, months * 10) };
}

/** The shortest span `months` calendar months can have, in days (28 per month is always reached). */
export function minimumDaysIn(months: number): number {
  return months * 28;
}

export const RecallMilestoneSchema = z.object({
  months: z
    .number({ error: 'Enter the milestone in whole months.' })
    .int('Enter the milestone in whole months.')
    .min(1, 'A milestone is at least 1 month after completion.')
    .max(MAX_MILESTONE_MONTHS, `A milestone is at most ${MAX_MILESTONE_MONTHS} months (10 years) after completion.`),
  windowBeforeDays: z
    .number()
    .int('Enter whole days.')
    .min(0, 'Days before the due date cannot be negative.')
    .max(180, 'At most 180 days before the due date.')
    .optional(),
  windowAfterDays: z
    .number()
    .int('Enter whole days.')
    .min(0, 'Days after the due date cannot be negative.')
    .max(365, 'At most 365 days after the due date.')
    .optional(),
});

export const RecallPolicySchema = z
  .object({
    milestones: z
      .array(RecallMilestoneSchema)
      .min(1, 'Keep at least one follow-up milestone.')
      .max(12, 'At most 12 milestones.'),
  })
  .transform((policy, ctx) => {
    const milestones = [...policy.milestones]
      .map((m) => ({ months: m.months, ...defaultWindow(m.months), ...defined(m) }))
      .sort((a, b) => a.months - b.months);
    for (let i = 1; i < milestones.length; i++) {
      const prev = milestones[i - 1]!;
      const next = milestones[i]!;
      if (prev.months === next.months) {
        ctx.addIssue({ code: 'custom', path: ['milestones'], message: `The ${next.months}-month milestone is listed twice.` });
        continue;
      }
      const gap = minimumDaysIn(next.months - prev.months);
      if (prev.windowAfterDays + next.windowBeforeDays >= gap) {
        ctx.addIssue({
          code: 'custom',
          path: ['milestones'],
          message:
            `The ${prev.months}-month window (+${prev.windowAfterDays} days) and the ${next.months}-month window ` +
            `(−${next.windowBeforeDays} days) can overlap; together they must stay under ${gap} days.`,
        });
      }
    }
    return { milestones };
  });

function defined(m: z.infer<typeof RecallMilestoneSchema>) {
  const out: { windowBeforeDays?: number; windowAfterDays?: number } = {};
  if (m.windowBeforeDays !== undefined) out.windowBeforeDays = m.windowBeforeDays;
  if (m.windowAfterDays !== undefined) out.windowAfterDays = m.windowAfterDays;
  return out;
}

/** The policy as a settings form or the API sends it (windows may be left out). */
export type RecallPolicyInput = z.input<typeof RecallPolicySchema>;
/** The policy with every window filled in and milestones in order: what recall planning uses. */
export type RecallPolicy = z.output<typeof RecallPolicySchema>;
export type RecallMilestone = RecallPolicy['milestones'][number];

export const DEFAULT_RECALL_MONTHS: readonly number[] = [6, 12, 24];

/** 6, 12 and 24 months with the default windows. */
export const DEFAULT_RECALL_POLICY: RecallPolicy = RecallPolicySchema.parse({
  milestones: DEFAULT_RECALL_MONTHS.map((months) => ({ months })),
});

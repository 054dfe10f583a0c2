import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { DEFAULT_REMINDER_POLICY, ReminderPolicySchema, lastNoticeOutsideWindows, type ReminderPolicy } from '@/lib/recall/reminders';
import { REMINDER_POLICY_BOUNDS } from '@/lib/schemas/reminder-policy';
import { audit } from './audit';
import { parseInput } from './parse';
import { reminderPolicyOf } from './recall-outbox';
import { knexOf, readWithSession, recallPolicyOf } from './registry-common';

/**
 * The practice's reminder policy (lib/schemas/reminder-policy.ts): when invitations, the second
 * invitation and the last notice go out, quiet hours, and after how many unanswered attempts a
 * missed visit closes as lost to follow-up.
 *
 * Who: the recall coordinator (`recall.manage`) reads and changes it. It governs the
 * coordinator's own work — which patients are written to, when, and when the desk stops
 * trying — and is best judged by the person who sees the replies; it holds no patient data, and
 * the administrator, who does not read patient records, has no view of its effects. Every change
 * is audited with the policy before and after.
 */

export interface ReminderPolicyView {
  policy: ReminderPolicy;
  defaults: ReminderPolicy;
  bounds: typeof REMINDER_POLICY_BOUNDS;
  /** Milestones whose window ends before the last notice is due (their visits are missed first). */
  lastNoticeOutsideWindows: number[];
}

async function view(em: EntityManager, practiceId: string): Promise<ReminderPolicyView> {
  const row = (await knexOf(em)('practice').where({ id: practiceId }).first('reminder_policy', 'recall_policy')) as { reminder_policy: unknown; recall_policy: unknown };
  const policy = reminderPolicyOf(row?.reminder_policy);
  return {
    policy,
    defaults: DEFAULT_REMINDER_POLICY,
    bounds: REMINDER_POLICY_BOUNDS,
    lastNoticeOutsideWindows: lastNoticeOutsideWindows(policy, recallPolicyOf(row?.recall_policy)),
  };
}

export async function getReminderPolicy(em: EntityManager, actor: Actor): Promise<ReminderPolicyView> {
  assertCan(actor, 'recall.manage');
  return view(em, actor.practiceId);
}

/** Replaces the policy (fields left out take their defaults). The next scan uses it. */
export async function updateReminderPolicy(em: EntityManager, actor: Actor, raw: unknown): Promise<ReminderPolicyView> {
  assertCan(actor, 'recall.manage');
  const policy = parseInput(ReminderPolicySchema, raw);
  const before = (await view(em, actor.practiceId)).policy;
  await knexOf(em)('practice').where({ id: actor.practiceId }).update({ reminder_policy: JSON.stringify(policy) });
  readWithSession(em, null); // the request's later reads see the new policy
  await audit(em, actor, { action: 'recall.policy_updated', entityType: 'practice', entityId: actor.practiceId, detail: { before, after: policy } });
  return view(em, actor.practiceId);
}

/**
 * Recall: visit statuses and their moves, recall plans from a practice's policy, reminder steps
 * and the follow-up rate. Pure code.
 */
export * from './status';
export * from './plan';
export * from './reminders';
export * from './follow-up-rate';
export * from './wording';
// reply-token.ts is left out on purpose: it needs node:crypto, and this index is imported by screens.
export {
  DEFAULT_RECALL_POLICY,
  DEFAULT_RECALL_MONTHS,
  RecallPolicySchema,
  defaultWindow,
  type RecallPolicy,
  type RecallPolicyInput,
  type RecallMilestone,
} from '@/lib/schemas/recall-policy';

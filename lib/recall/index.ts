/** Recall: visit statuses and their moves, and recall plans from a practice's policy. Pure code. */
export * from './status';
export * from './plan';
export {
  DEFAULT_RECALL_POLICY,
  DEFAULT_RECALL_MONTHS,
  RecallPolicySchema,
  defaultWindow,
  type RecallPolicy,
  type RecallPolicyInput,
  type RecallMilestone,
} from '@/lib/schemas/recall-policy';

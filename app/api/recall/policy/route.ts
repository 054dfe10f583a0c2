import { handler, readJson } from '@/lib/http';
import { getReminderPolicy, updateReminderPolicy } from '@/lib/services/recall-policy';

/** GET /api/recall/policy → { policy, defaults, bounds, lastNoticeOutsideWindows }. */
export const GET = handler('recall.manage', async ({ em, actor }) => getReminderPolicy(em, actor));

/** PUT /api/recall/policy (ReminderPolicyInput; fields left out take their defaults) → the same shape as GET. */
export const PUT = handler('recall.manage', async ({ req, em, actor }) => updateReminderPolicy(em, actor, await readJson(req)));

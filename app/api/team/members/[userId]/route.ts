import { z } from 'zod';
import { handler, readJson } from '@/lib/http';
import { deactivateMember, setMemberRoles } from '@/lib/services/team';
import { parseInput } from '@/lib/services/parse';

const Params = z.object({ userId: z.uuid({ error: 'Unknown member.' }) });

/** Sets the member's roles in the caller's practice (grants and revokes); never one's own. */
export const PATCH = handler<{ userId: string }>('team.manage', async ({ req, em, actor, params }) => {
  const { userId } = parseInput(Params, params);
  return { roles: await setMemberRoles(em, actor, userId, await readJson(req)) };
});

/** Deactivates the member in the caller's practice: every role revoked, every session ended. */
export const DELETE = handler<{ userId: string }>('team.manage', async ({ em, actor, params }) => {
  const { userId } = parseInput(Params, params);
  await deactivateMember(em, actor, userId);
  return { deactivated: true };
});

import { z } from 'zod';
import { handler, readJson } from '@/lib/http';
import { setMemberRoles } from '@/lib/services/team';
import { parseInput } from '@/lib/services/parse';

const Params = z.object({ userId: z.uuid({ error: 'Unknown member.' }) });

/** Sets the member's roles in the caller's practice (grants and revokes). */
export const PATCH = handler<{ userId: string }>('team.manage', async ({ req, em, actor, params }) => {
  const { userId } = parseInput(Params, params);
  return { roles: await setMemberRoles(em, actor, userId, await readJson(req)) };
});

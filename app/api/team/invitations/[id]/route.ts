import { z } from 'zod';
import { handler } from '@/lib/http';
import { revokeInvitation } from '@/lib/services/team';
import { parseInput } from '@/lib/services/parse';

const Params = z.object({ id: z.uuid({ error: 'Unknown invitation.' }) });

/** Withdraws a pending invitation of the caller's practice. */
export const DELETE = handler<{ id: string }>('team.manage', async ({ em, actor, params }) => {
  const { id } = parseInput(Params, params);
  await revokeInvitation(em, actor, id);
  return { revoked: true };
});

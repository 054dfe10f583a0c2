import { z } from 'zod';
import { handler } from '@/lib/http';
import { resendInvitation } from '@/lib/services/team';
import { parseInput } from '@/lib/services/parse';

const Params = z.object({ id: z.uuid({ error: 'Unknown invitation.' }) });

/** Sends a pending invitation again with a new link and expiry. */
export const POST = handler<{ id: string }>('team.manage', async ({ em, actor, params }) => {
  const { id } = parseInput(Params, params);
  return resendInvitation(em, actor, id);
});

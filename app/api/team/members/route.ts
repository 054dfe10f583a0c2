import { handler } from '@/lib/http';
import { listMembers } from '@/lib/services/team';

export const GET = handler('team.read', async ({ em, actor }) => ({ members: await listMembers(em, actor) }));

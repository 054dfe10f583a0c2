import { handler, json, readJson } from '@/lib/http';
import { inviteMember } from '@/lib/services/team';

export const POST = handler('team.manage', async ({ req, em, actor }) => json(await inviteMember(em, actor, await readJson(req)), 201));

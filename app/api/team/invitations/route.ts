import { handler, json, readJson } from '@/lib/http';
import { inviteMember, listInvitations } from '@/lib/services/team';

/** Pending invitations of the caller's practice. */
export const GET = handler('team.read', async ({ em, actor }) => ({ invitations: await listInvitations(em, actor) }));

export const POST = handler('team.manage', async ({ req, em, actor }) => json(await inviteMember(em, actor, await readJson(req)), 201));

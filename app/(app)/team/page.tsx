import type { Metadata } from 'next';
import Link from 'next/link';
import { requireActor } from '@/lib/auth/session';
import { can } from '@/lib/auth/permissions';
import { listInvitations, listMembers } from '@/lib/services/team';
import { MembersTable } from './_components/MembersTable';
import { InviteForm } from './_components/InviteFormLazy';
import { InvitationsTable } from './_components/InvitationsTable';

export const metadata: Metadata = { title: 'Team' };

export default async function TeamPage() {
  const { em, actor } = await requireActor('team.read', '/team');
  const [members, invitations] = await Promise.all([listMembers(em, actor), listInvitations(em, actor)]);
  const manage = can(actor.roles, 'team.manage');
  return (
    <div className="space-y-8">
      <div className="flex flex-wrap items-end justify-between gap-4">
        <div>
          <h1 className="text-3xl">Team</h1>
          <p className="mt-1 text-ink-700">Who works in {actor.practiceName} on Lamina, and what each person may do.</p>
        </div>
        <div className="flex gap-2">
          {manage && (
            <Link href="/team/settings" className="btn-secondary no-underline">
              Practice settings
            </Link>
          )}
          {can(actor.roles, 'audit.read') && (
            <Link href="/team/audit" className="btn-secondary no-underline">
              Audit trail
            </Link>
          )}
        </div>
      </div>
      <MembersTable members={members} currentUserId={actor.userId} canManage={manage} />
      <InvitationsTable invitations={invitations} canManage={manage} />
      {manage && <InviteForm />}
    </div>
  );
}

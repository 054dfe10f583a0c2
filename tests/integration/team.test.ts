import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema, InvitationSchema, MembershipSchema, UserSchema } from '@/entities';
import { acceptInvitation, inviteMember, listMembers, lookupInvitation, setMemberRoles } from '@/lib/services/team';
import { listAuditEvents } from '@/lib/services/audit';
import { loadActor } from '@/lib/services/auth';
import { verifyPassword } from '@/lib/auth/password';
import { ConflictError, ForbiddenError, NotFoundError, ValidationError } from '@/lib/services/errors';
import { makePractice, openServices, resetData } from '../support/db';
import { mailboxHeaders } from '@/lib/mail/mailbox-secret';

const services = await openServices();
afterAll(() => services.close());
beforeEach(() => resetData(services.orm, services.redis));

const mailbox = process.env.MAILBOX_URL!;
const origin = { ip: '127.0.0.9', userAgent: 'vitest' };

async function twoPractices() {
  const em = services.em();
  const a = await makePractice(em, 'alder', [
    { email: 'admin@alder.test', roles: ['admin'] },
    { email: 'cora@alder.test', roles: ['coordinator'] },
  ]);
  const b = await makePractice(em, 'birch', [
    { email: 'admin@birch.test', roles: ['admin'] },
    { email: 'cal@birch.test', roles: ['clinician'] },
  ]);
  return { a, b };
}

async function invitationLink(to: string): Promise<string> {
  for (let i = 0; i < 50; i++) {
    const list = (await (await fetch(`${mailbox}/messages?to=${encodeURIComponent(to)}`, { headers: mailboxHeaders(process.env.MAILBOX_SECRET) })).json()) as { text: string }[] | { messages: { text: string }[] };
    const messages = Array.isArray(list) ? list : list.messages;
    const m = messages[0]?.text.match(/\/invite\/([A-Za-z0-9_-]+)/);
    if (m) return m[1]!;
    await new Promise((r) => setTimeout(r, 100));
  }
  throw new Error(`no invitation mail to ${to}`);
}

describe('team: invitations and roles', () => {
  it('invites a person by e-mail: user, roles, mail and audit event', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    const to = `dee.${Date.now()}@alder.test`;
    const { userId } = await inviteMember(services.em(), admin, { email: to, name: 'Dee', roles: ['clinician', 'auditor'] });
    const roles = (await services.em().find(MembershipSchema, { user: userId, revokedAt: null })).map((m) => m.role).sort();
    expect(roles).toEqual(['auditor', 'clinician']);
    const token = await invitationLink(to);
    expect(await lookupInvitation(services.em(), token)).toMatchObject({ ok: true, view: { email: to, needsPassword: true } });
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'team.invited' });
    expect(event).toMatchObject({ actorId: admin.userId, entityId: userId, practiceId: admin.practiceId, detail: { email: to, roles: ['clinician', 'auditor'] } });
    // The stored token is a hash, never the token itself.
    const inv = await services.em().findOneOrFail(InvitationSchema, { user: userId });
    expect(inv.tokenHash).not.toBe(token);
  });

  it('accepts an invitation once; a second use and a wrong token are refused', async () => {
    const { a } = await twoPractices();
    const to = `eli.${Date.now()}@alder.test`;
    await inviteMember(services.em(), a.actor('admin@alder.test'), { email: to, name: 'Eli', roles: ['researcher'] });
    const token = await invitationLink(to);
    await expect(acceptInvitation(services.em(), { token, name: 'Eli Ash', password: 'short', confirm: 'short' }, origin)).rejects.toBeInstanceOf(
      ValidationError,
    );
    await acceptInvitation(services.em(), { token, name: 'Eli Ash', password: 'a-long-passphrase', confirm: 'a-long-passphrase' }, origin);
    const user = await services.em().findOneOrFail(UserSchema, { email: to });
    expect(user.name).toBe('Eli Ash');
    expect(await verifyPassword('a-long-passphrase', user.passwordHash)).toBe(true);
    await expect(
      acceptInvitation(services.em(), { token, name: 'X', password: 'another-passphrase', confirm: 'another-passphrase' }, origin),
    ).rejects.toThrow(/already been accepted/);
    expect(await lookupInvitation(services.em(), 'A'.repeat(43))).toMatchObject({ ok: false });
    expect(await services.em().count(AuditEventSchema, { action: 'team.invitation_accepted', actorId: user.id })).toBe(1);
  });

  it('refuses an expired invitation', async () => {
    const { a } = await twoPractices();
    const to = `fay.${Date.now()}@alder.test`;
    const { userId } = await inviteMember(services.em(), a.actor('admin@alder.test'), { email: to, name: 'Fay', roles: ['clinician'] });
    await services.em().nativeUpdate(InvitationSchema, { user: userId }, { expiresAt: new Date(Date.now() - 1000) });
    expect(await lookupInvitation(services.em(), await invitationLink(to))).toMatchObject({ ok: false, reason: expect.stringMatching(/expired/) });
  });

  it('grants and revokes roles; a revoked role is gone from the next loaded actor; both are audited', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    const cora = a.actor('cora@alder.test');
    await setMemberRoles(services.em(), admin, cora.userId, { roles: ['coordinator', 'clinician'] });
    expect((await loadActor(services.em(), cora.userId, origin))?.roles.sort()).toEqual(['clinician', 'coordinator']);
    await setMemberRoles(services.em(), admin, cora.userId, { roles: ['clinician'] });
    expect((await loadActor(services.em(), cora.userId, origin))?.roles).toEqual(['clinician']);
    const trail = (await services.em().find(AuditEventSchema, { action: { $like: 'team.role%' } }, { orderBy: { at: 'asc' } })).map((e) => [
      e.action,
      e.detail?.role,
    ]);
    expect(trail).toEqual([
      ['team.role_granted', 'clinician'],
      ['team.role_revoked', 'coordinator'],
    ]);
  });

  it('keeps at least one administrator and refuses duplicate invitations', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    await expect(setMemberRoles(services.em(), admin, admin.userId, { roles: ['clinician'] })).rejects.toBeInstanceOf(ConflictError);
    await expect(inviteMember(services.em(), admin, { email: 'cora@alder.test', name: 'Cora', roles: ['clinician'] })).rejects.toBeInstanceOf(
      ConflictError,
    );
  });

  it('only the administrator manages the team', async () => {
    const { a } = await twoPractices();
    const cora = a.actor('cora@alder.test');
    await expect(listMembers(services.em(), cora)).rejects.toBeInstanceOf(ForbiddenError);
    await expect(inviteMember(services.em(), cora, { email: 'z@alder.test', name: 'Z', roles: ['admin'] })).rejects.toBeInstanceOf(ForbiddenError);
    await expect(setMemberRoles(services.em(), cora, cora.userId, { roles: ['admin'] })).rejects.toBeInstanceOf(ForbiddenError);
  });
});

describe('practice isolation', () => {
  it('an administrator sees and changes only their own practice', async () => {
    const { a, b } = await twoPractices();
    const adminA = a.actor('admin@alder.test');
    const members = await listMembers(services.em(), adminA);
    expect(members.map((m) => m.email).sort()).toEqual(['admin@alder.test', 'cora@alder.test']);
    const cal = b.actor('cal@birch.test');
    await expect(setMemberRoles(services.em(), adminA, cal.userId, { roles: ['admin'] })).rejects.toBeInstanceOf(NotFoundError);
    expect((await loadActor(services.em(), cal.userId, origin))?.roles).toEqual(['clinician']);
  });

  it('the audit trail shows only the practice’s own events, and reading it is audited', async () => {
    const { a, b } = await twoPractices();
    await setMemberRoles(services.em(), b.actor('admin@birch.test'), b.actor('cal@birch.test').userId, { roles: ['clinician', 'auditor'] });
    const page = await listAuditEvents(services.em(), a.actor('admin@alder.test'), { page: 1, pageSize: 50 });
    expect(page.rows.every((r) => r.action === 'audit.read')).toBe(true);
    expect(await services.em().count(AuditEventSchema, { action: 'audit.read', practiceId: a.practice.id })).toBe(1);
    const pageB = await listAuditEvents(services.em(), b.actor('admin@birch.test'), { page: 1, pageSize: 50 });
    expect(pageB.rows.map((r) => r.action)).toContain('team.role_granted');
  });

  it('a user in two practices acts in one at a time, with that practice’s roles', async () => {
    const { a, b } = await twoPractices();
    const em = services.em();
    const cora = a.actor('cora@alder.test');
    em.create(MembershipSchema, { user: cora.userId, practice: b.practice.id, role: 'researcher' } as never);
    await em.flush();
    const inA = await loadActor(services.em(), cora.userId, origin, a.practice.id);
    const inB = await loadActor(services.em(), cora.userId, origin, b.practice.id);
    expect([inA?.practiceId, inA?.roles]).toEqual([a.practice.id, ['coordinator']]);
    expect([inB?.practiceId, inB?.roles]).toEqual([b.practice.id, ['researcher']]);
    const unknown = await loadActor(services.em(), cora.userId, origin, '00000000-0000-4000-8000-000000000000');
    expect(unknown?.practiceId).toBe(a.practice.id);
  });
});

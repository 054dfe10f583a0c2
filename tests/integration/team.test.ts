import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { AuditEventSchema, InvitationSchema, MembershipSchema, UserSchema } from '@/entities';
import {
  acceptInvitation,
  acceptInvitationSignedIn,
  deactivateMember,
  inviteMember,
  listInvitations,
  listMembers,
  lookupInvitation,
  resendInvitation,
  revokeInvitation,
  setMemberRoles,
} from '@/lib/services/team';
import { listAuditEvents } from '@/lib/services/audit';
import { WRONG_CREDENTIALS, loadActor, resolveSession, verifyCredentials } from '@/lib/services/auth';
import { verifyPassword } from '@/lib/auth/password';
import { ConflictError, ForbiddenError, NotFoundError, ValidationError } from '@/lib/services/errors';
import { PASSWORD, makePractice, openServices, resetData } from '../support/db';
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
  // Polled with a deadline suited to a loaded machine (the mail goes through SMTP to the fake).
  const deadline = Date.now() + 30_000;
  while (Date.now() < deadline) {
    const list = (await (await fetch(`${mailbox}/messages?to=${encodeURIComponent(to)}`, { headers: mailboxHeaders(process.env.MAILBOX_SECRET) })).json()) as { text: string }[] | { messages: { text: string }[] };
    const messages = Array.isArray(list) ? list : list.messages;
    const m = messages[0]?.text.match(/\/invite\/([A-Za-z0-9_-]+)/);
    if (m) return m[1]!;
    await new Promise((r) => setTimeout(r, 200));
  }
  throw new Error(`no invitation mail to ${to}`);
}

describe('team: invitations and roles', () => {
  it('invites a person by e-mail: user, roles, mail and audit event', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    const to = `dee.${Date.now()}@alder.test`;
    const { invitationId } = await inviteMember(services.em(), admin, { email: to, name: 'Dee', roles: ['clinician', 'auditor'] });
    const user = await services.em().findOneOrFail(UserSchema, { email: to });
    // Nothing is granted before the person says yes.
    expect(await services.em().count(MembershipSchema, { user: user.id })).toBe(0);
    const token = await invitationLink(to);
    expect(await lookupInvitation(services.em(), token)).toMatchObject({ ok: true, view: { email: to, needsPassword: true, needsSignIn: false } });
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'team.invited' });
    expect(event).toMatchObject({ actorId: admin.userId, entityId: invitationId, practiceId: admin.practiceId, detail: { email: to, roles: ['clinician', 'auditor'] } });
    // The stored token is a hash, never the token itself.
    const inv = await services.em().findOneOrFail(InvitationSchema, { id: invitationId });
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
    const roles = (await services.em().find(MembershipSchema, { user: user.id, revokedAt: null })).map((m) => m.role);
    expect(roles).toEqual(['researcher']);
    await expect(
      acceptInvitation(services.em(), { token, name: 'X', password: 'another-passphrase', confirm: 'another-passphrase' }, origin),
    ).rejects.toThrow(/already been accepted/);
    expect(await lookupInvitation(services.em(), 'A'.repeat(43))).toMatchObject({ ok: false });
    expect(await services.em().count(AuditEventSchema, { action: 'team.invitation_accepted', actorId: user.id })).toBe(1);
  });

  it('refuses an expired invitation', async () => {
    const { a } = await twoPractices();
    const to = `fay.${Date.now()}@alder.test`;
    const { invitationId } = await inviteMember(services.em(), a.actor('admin@alder.test'), { email: to, name: 'Fay', roles: ['clinician'] });
    await services.em().nativeUpdate(InvitationSchema, { id: invitationId }, { expiresAt: new Date(Date.now() - 1000) });
    expect(await lookupInvitation(services.em(), await invitationLink(to))).toMatchObject({ ok: false, reason: expect.stringMatching(/expired/) });
  });

  it('grants and revokes roles; a revoked role is gone from the next loaded actor; both are audited', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    const cora = a.actor('cora@alder.test');
    await setMemberRoles(services.em(), admin, cora.userId, { roles: ['coordinator', 'clinician'] });
    expect((await loadActor(services.em(), cora.userId, origin, { sessionVersion: 0 }))?.roles.sort()).toEqual(['clinician', 'coordinator']);
    await setMemberRoles(services.em(), admin, cora.userId, { roles: ['clinician'] });
    // The revocation ended Cora's sessions (version 0 → 1); a new session has only the role left.
    expect(await loadActor(services.em(), cora.userId, origin, { sessionVersion: 0 })).toBeNull();
    expect((await loadActor(services.em(), cora.userId, origin, { sessionVersion: 1 }))?.roles).toEqual(['clinician']);
    const trail = (await services.em().find(AuditEventSchema, { action: { $like: 'team.role%' } }, { orderBy: { at: 'asc' } })).map((e) => [
      e.action,
      e.actorEmail,
      e.entityId,
      e.detail?.role,
      e.detail?.member,
    ]);
    // Both people named: who changed it (the actor) and whose roles changed (the member).
    expect(trail).toEqual([
      ['team.role_granted', 'admin@alder.test', cora.userId, 'clinician', 'cora@alder.test'],
      ['team.role_revoked', 'admin@alder.test', cora.userId, 'coordinator', 'cora@alder.test'],
    ]);
  });

  it('nobody changes their own roles or deactivates themselves (so the last administrator stays), and duplicate invitations are refused', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    // Before: an administrator could PATCH their own roles (and give themselves any role).
    await expect(setMemberRoles(services.em(), admin, admin.userId, { roles: ['admin', 'clinician'] })).rejects.toThrow(/cannot change the roles of yourself/);
    await expect(setMemberRoles(services.em(), admin, admin.userId, { roles: ['clinician'] })).rejects.toBeInstanceOf(ForbiddenError);
    await expect(deactivateMember(services.em(), admin, admin.userId)).rejects.toBeInstanceOf(ForbiddenError);
    expect((await services.em().find(MembershipSchema, { user: admin.userId, revokedAt: null })).map((m) => m.role)).toEqual(['admin']);
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
    expect((await loadActor(services.em(), cal.userId, origin, { sessionVersion: 0 }))?.roles).toEqual(['clinician']);
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
    const inA = await loadActor(services.em(), cora.userId, origin, { sessionVersion: 0, practiceId: a.practice.id });
    const inB = await loadActor(services.em(), cora.userId, origin, { sessionVersion: 0, practiceId: b.practice.id });
    expect([inA?.practiceId, inA?.roles]).toEqual([a.practice.id, ['coordinator']]);
    expect([inB?.practiceId, inB?.roles]).toEqual([b.practice.id, ['researcher']]);
    // No choice (or a practice she is not in): nothing is picked for her, she must choose.
    for (const practiceId of [null, '00000000-0000-4000-8000-000000000000']) {
      const s = await resolveSession(services.em(), cora.userId, origin, { sessionVersion: 0, practiceId });
      expect(s.kind).toBe('choose_practice');
      expect(s.kind === 'choose_practice' && s.practices.map((p) => p.id).sort()).toEqual([a.practice.id, b.practice.id].sort());
    }
  });
});

describe('nobody joins a practice without saying yes (issue 9, item 1)', () => {
  it('an invitation to someone of another practice grants nothing, shows nothing of them, and moves nothing until they accept signed in', async () => {
    const { a, b } = await twoPractices();
    const adminB = b.actor('admin@birch.test');
    const cora = a.actor('cora@alder.test');
    await services.em().nativeUpdate(UserSchema, { id: cora.userId }, { name: 'Cora Alderman', lastSignInAt: new Date('2026-12-01T09:00:00Z') });
    await inviteMember(services.em(), adminB, { email: 'cora@alder.test', name: 'Whoever', roles: ['admin'] });

    // Before: the membership was granted at once, and B's team list showed her name and last sign-in.
    expect(await services.em().count(MembershipSchema, { user: cora.userId, practice: b.practice.id })).toBe(0);
    const members = await listMembers(services.em(), adminB);
    expect(members.map((m) => m.email)).not.toContain('cora@alder.test');
    const pending = await listInvitations(services.em(), adminB);
    expect(pending).toHaveLength(1);
    expect(pending[0]).toMatchObject({ email: 'cora@alder.test', roles: ['admin'], expired: false });
    expect(JSON.stringify(pending)).not.toMatch(/Alderman|2026-12-01T09/);
    // Her session still acts in A alone: nothing switched her to B.
    const s = await resolveSession(services.em(), cora.userId, origin, { sessionVersion: 0, practiceId: a.practice.id });
    expect(s.kind === 'actor' && [s.actor.practiceId, s.practices.length]).toEqual([a.practice.id, 1]);
    const single = await resolveSession(services.em(), cora.userId, origin, { sessionVersion: 0, practiceId: null });
    expect(single.kind === 'actor' && single.actor.practiceId).toBe(a.practice.id);

    // The link alone does not let anyone accept for an existing account (nor rename it).
    const token = await invitationLink('cora@alder.test');
    expect(await lookupInvitation(services.em(), token)).toMatchObject({ ok: true, view: { needsPassword: false, needsSignIn: true } });
    await expect(
      acceptInvitation(services.em(), { token, name: 'Mallory', password: 'attacker-chosen-pass', confirm: 'attacker-chosen-pass' }, origin),
    ).rejects.toBeInstanceOf(ForbiddenError);
    // Signed in as someone else: refused.
    await expect(acceptInvitationSignedIn(services.em(), b.actor('cal@birch.test').userId, token, origin)).rejects.toBeInstanceOf(ForbiddenError);
    expect(await services.em().count(MembershipSchema, { user: cora.userId, practice: b.practice.id })).toBe(0);

    // Signed in as herself: she joins; her name is unchanged; B now lists her.
    await acceptInvitationSignedIn(services.em(), cora.userId, token, origin);
    expect((await services.em().findOneOrFail(UserSchema, { id: cora.userId })).name).toBe('Cora Alderman');
    expect((await listMembers(services.em(), adminB)).find((m) => m.email === 'cora@alder.test')).toMatchObject({ roles: ['admin'], status: 'active' });
    expect(await listInvitations(services.em(), adminB)).toEqual([]);
    // Now in two practices, a session without a choice must choose.
    expect((await resolveSession(services.em(), cora.userId, origin, { sessionVersion: 0, practiceId: null })).kind).toBe('choose_practice');
  });
});

describe('team administration (issue 10): deactivate, resend, withdraw', () => {
  it('deactivating a member revokes every role, ends their sessions, refuses their sign-in, and is audited', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    const cora = a.actor('cora@alder.test');
    await deactivateMember(services.em(), admin, cora.userId);
    expect(await loadActor(services.em(), cora.userId, origin, { sessionVersion: 0 })).toBeNull();
    expect(await loadActor(services.em(), cora.userId, origin, { sessionVersion: 1 })).toBeNull();
    await expect(
      verifyCredentials(services.em(), services.redis, { freePerAccountAddress: 5, freePerAddress: 20, baseDelaySeconds: 30, maxDelaySeconds: 900, windowSeconds: 60, linksPerAccount: 5, linksPerAddress: 20, linkWindowSeconds: 60 }, { email: 'cora@alder.test', password: PASSWORD }, origin),
    ).rejects.toThrow(WRONG_CREDENTIALS);
    expect((await listMembers(services.em(), admin)).find((m) => m.email === 'cora@alder.test')).toMatchObject({ status: 'deactivated', roles: [] });
    const event = await services.em().findOneOrFail(AuditEventSchema, { action: 'team.member_deactivated' });
    expect(event).toMatchObject({ actorEmail: 'admin@alder.test', entityId: cora.userId, detail: { member: 'cora@alder.test', roles: ['coordinator'] } });
    await expect(deactivateMember(services.em(), admin, cora.userId)).rejects.toBeInstanceOf(ConflictError);
    // Roles given back reactivate her.
    await setMemberRoles(services.em(), admin, cora.userId, { roles: ['coordinator'] });
    expect((await loadActor(services.em(), cora.userId, origin, { sessionVersion: 1 }))?.roles).toEqual(['coordinator']);
    expect(await services.em().count(AuditEventSchema, { action: 'team.member_reactivated', entityId: cora.userId })).toBe(1);
  });

  it('an administrator of another practice cannot deactivate, resend or withdraw', async () => {
    const { a, b } = await twoPractices();
    const { invitationId } = await inviteMember(services.em(), a.actor('admin@alder.test'), { email: 'new@alder.test', name: 'New', roles: ['clinician'] });
    const adminB = b.actor('admin@birch.test');
    await expect(deactivateMember(services.em(), adminB, a.actor('cora@alder.test').userId)).rejects.toBeInstanceOf(NotFoundError);
    await expect(resendInvitation(services.em(), adminB, invitationId)).rejects.toBeInstanceOf(NotFoundError);
    await expect(revokeInvitation(services.em(), adminB, invitationId)).rejects.toBeInstanceOf(NotFoundError);
    await expect(deactivateMember(services.em(), a.actor('cora@alder.test'), a.actor('admin@alder.test').userId)).rejects.toBeInstanceOf(ForbiddenError);
  });

  it('resending sends a new link (the old one stops working); withdrawing makes the link refuse', async () => {
    const { a } = await twoPractices();
    const admin = a.actor('admin@alder.test');
    const to = `gil.${Date.now()}@alder.test`;
    const { invitationId } = await inviteMember(services.em(), admin, { email: to, name: 'Gil', roles: ['auditor'] });
    const first = await invitationLink(to);
    await fetch(`${mailbox}/messages`, { method: 'DELETE' });
    await resendInvitation(services.em(), admin, invitationId);
    const second = await invitationLink(to);
    expect(second).not.toBe(first);
    expect(await lookupInvitation(services.em(), first)).toMatchObject({ ok: false });
    expect(await lookupInvitation(services.em(), second)).toMatchObject({ ok: true });
    await revokeInvitation(services.em(), admin, invitationId);
    expect(await lookupInvitation(services.em(), second)).toMatchObject({ ok: false, reason: expect.stringMatching(/withdrawn/) });
    await expect(revokeInvitation(services.em(), admin, invitationId)).rejects.toBeInstanceOf(ConflictError);
    expect(await listInvitations(services.em(), admin)).toEqual([]);
    const trail = (await services.em().find(AuditEventSchema, { action: { $like: 'team.invitation%' } }, { orderBy: { at: 'asc' } })).map((e) => e.action);
    expect(trail).toEqual(['team.invitation_resent', 'team.invitation_revoked']);
  });
});

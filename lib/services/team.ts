import 'server-only';
import { createHash, randomBytes } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Loaded } from '@mikro-orm/core';
import { InvitationSchema, MembershipSchema, PracticeSchema, UserSchema, type Invitation, type Practice, type User } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import type { Origin } from '@/lib/auth/origin';
import { hashPassword } from '@/lib/auth/password';
import { isRole, ROLE_LABELS, ROLES, type Role } from '@/lib/auth/roles';
import { InviteInput, SetRolesInput, AcceptInvitationInput } from '@/lib/schemas/auth';
import { env } from '@/lib/env';
import { sendMail } from '@/lib/mail/mailer';
import { InvitationEmail } from '@/lib/mail/templates/InvitationEmail';
import { audit } from './audit';
import { endSessions } from './auth';
import { ConflictError, ForbiddenError, NotFoundError, ValidationError } from './errors';
import { parseInput as parse } from './parse';

const INVITATION_DAYS = 7;

export interface MemberRow {
  userId: string;
  email: string;
  name: string | null;
  roles: Role[];
  /** Deactivated: every role was revoked at once; roles given back reactivate the member. */
  status: 'active' | 'deactivated';
  lastSignInAt: string | null;
}

export interface InvitationRow {
  id: string;
  /** Only the address the administrator typed: nothing of an existing account shows before it accepts. */
  email: string;
  roles: Role[];
  invitedBy: string | null;
  createdAt: string;
  expiresAt: string;
  expired: boolean;
}

const hashToken = (token: string) => createHash('sha256').update(token).digest('hex');
const sortRoles = (roles: Role[]) => roles.sort((a, b) => ROLES.indexOf(a) - ROLES.indexOf(b));

/**
 * The members of the actor's practice with their current roles. A membership exists only once
 * the person accepted an invitation, so nobody invited but not yet joined is listed here (their
 * name and last sign-in stay theirs); pending invitations are listed by listInvitations.
 */
export async function listMembers(em: EntityManager, actor: Actor): Promise<MemberRow[]> {
  assertCan(actor, 'team.read');
  const memberships = await em.find(
    MembershipSchema,
    { practice: actor.practiceId },
    { populate: ['user'], orderBy: { user: { name: 'asc', email: 'asc' } } },
  );
  const byUser = new Map<string, MemberRow>();
  for (const m of memberships) {
    const u = m.user.$;
    const row =
      byUser.get(u.id) ??
      ({
        userId: u.id,
        email: u.email,
        name: u.name ?? null,
        roles: [] as Role[],
        status: 'active',
        lastSignInAt: u.lastSignInAt?.toISOString() ?? null,
      } satisfies MemberRow);
    if (!m.revokedAt) row.roles.push(m.role as Role);
    byUser.set(u.id, row);
  }
  for (const row of byUser.values()) {
    sortRoles(row.roles);
    if (row.roles.length === 0) row.status = 'deactivated';
  }
  return [...byUser.values()];
}

/** Invitations of the actor's practice not yet accepted or withdrawn, newest first (expired ones marked). */
export async function listInvitations(em: EntityManager, actor: Actor): Promise<InvitationRow[]> {
  assertCan(actor, 'team.read');
  const rows = await em.find(
    InvitationSchema,
    { practice: actor.practiceId, acceptedAt: null, revokedAt: null },
    { populate: ['user', 'invitedBy'], orderBy: { createdAt: 'desc' } },
  );
  const now = new Date();
  return rows.map((inv) => ({
    id: inv.id,
    email: inv.user.$.email,
    roles: sortRoles(inv.roles.filter(isRole)),
    invitedBy: inv.invitedBy?.$ ? (inv.invitedBy.$.name ?? inv.invitedBy.$.email) : null,
    createdAt: inv.createdAt.toISOString(),
    expiresAt: inv.expiresAt.toISOString(),
    expired: inv.expiresAt < now,
  }));
}

/**
 * Invites a person by e-mail with the given roles in the actor's practice. Nothing is granted
 * yet: the roles become memberships when the person accepts (a new person by choosing a
 * password through the link, someone with an account while signed in).
 */
export async function inviteMember(em: EntityManager, actor: Actor, raw: unknown): Promise<{ invitationId: string }> {
  assertCan(actor, 'team.manage');
  const input = parse(InviteInput, raw);
  const practice = await em.findOneOrFail(PracticeSchema, actor.practiceId);
  const token = randomBytes(32).toString('base64url');

  const invitationId = await em.transactional(async (tx) => {
    let user = await tx.findOne(UserSchema, { email: input.email });
    if (user) {
      const member = await tx.count(MembershipSchema, { user: user.id, practice: actor.practiceId });
      if (member > 0) {
        throw new ConflictError(`${input.email} is already a member of this practice (a deactivated member gets roles back in the team list).`);
      }
      const pending = await tx.count(InvitationSchema, {
        user: user.id,
        practice: actor.practiceId,
        acceptedAt: null,
        revokedAt: null,
        expiresAt: { $gt: new Date() },
      });
      if (pending > 0) throw new ConflictError(`${input.email} already has a pending invitation. Resend it from the list of invitations.`);
    } else {
      // No password yet (MikroORM's Hidden<string | null> type drops the null, hence the narrow cast).
      user = tx.create(UserSchema, { email: input.email, name: input.name, passwordHash: null as unknown as User['passwordHash'] });
    }
    const invitation = tx.create(InvitationSchema, {
      practice: actor.practiceId,
      user,
      invitedBy: actor.userId,
      tokenHash: hashToken(token),
      roles: input.roles,
      expiresAt: new Date(Date.now() + INVITATION_DAYS * 86_400_000),
    });
    await tx.flush();
    return invitation.id;
  });

  await sendInvitation(practice, actor, input.email, input.roles, token);
  await audit(em, actor, {
    action: 'team.invited',
    entityType: 'invitation',
    entityId: invitationId,
    detail: { email: input.email, roles: input.roles },
  });
  return { invitationId };
}

async function sendInvitation(practice: Practice, actor: Actor, to: string, roles: readonly Role[], token: string) {
  await sendMail({
    to,
    subject: `Invitation to ${practice.name} on Lamina`,
    template: InvitationEmail({
      url: `${env.APP_URL}/invite/${token}`,
      practiceName: practice.name,
      inviterName: actor.name ?? actor.email,
      roles: roles.map((r) => ROLE_LABELS[r]),
    }),
  });
}

async function pendingInvitation(em: EntityManager, actor: Actor, invitationId: string) {
  const inv = await em.findOne(InvitationSchema, { id: invitationId, practice: actor.practiceId }, { populate: ['user'] });
  if (!inv) throw new NotFoundError('No such invitation in this practice.');
  if (inv.acceptedAt) throw new ConflictError('This invitation was already accepted.');
  if (inv.revokedAt) throw new ConflictError('This invitation was withdrawn. Invite the person again.');
  return inv;
}

/** Sends a pending invitation again with a new link (the old link stops working) and a new expiry. */
export async function resendInvitation(em: EntityManager, actor: Actor, invitationId: string): Promise<{ expiresAt: string }> {
  assertCan(actor, 'team.manage');
  const inv = await pendingInvitation(em, actor, invitationId);
  const practice = await em.findOneOrFail(PracticeSchema, actor.practiceId);
  const token = randomBytes(32).toString('base64url');
  inv.tokenHash = hashToken(token);
  inv.expiresAt = new Date(Date.now() + INVITATION_DAYS * 86_400_000);
  await em.flush();
  await sendInvitation(practice, actor, inv.user.$.email, inv.roles.filter(isRole), token);
  await audit(em, actor, { action: 'team.invitation_resent', entityType: 'invitation', entityId: inv.id, detail: { email: inv.user.$.email } });
  return { expiresAt: inv.expiresAt.toISOString() };
}

/** Withdraws a pending invitation: its link stops working. */
export async function revokeInvitation(em: EntityManager, actor: Actor, invitationId: string): Promise<void> {
  assertCan(actor, 'team.manage');
  const inv = await pendingInvitation(em, actor, invitationId);
  inv.revokedAt = new Date();
  await em.flush();
  await audit(em, actor, { action: 'team.invitation_revoked', entityType: 'invitation', entityId: inv.id, detail: { email: inv.user.$.email } });
}

const notYourself = (what: string) => new ForbiddenError(`You cannot ${what} yourself. Ask another administrator of the practice.`);

/**
 * Sets a member's roles in the actor's practice: grants the new ones, revokes the others. Made
 * by another administrator, never by the member themselves; audited naming both (the actor and
 * `member`). A revoked role ends the member's sessions. Giving a deactivated member roles
 * reactivates them.
 */
export async function setMemberRoles(em: EntityManager, actor: Actor, userId: string, raw: unknown): Promise<Role[]> {
  assertCan(actor, 'team.manage');
  if (userId === actor.userId) throw notYourself('change the roles of');
  const { roles } = parse(SetRolesInput, raw);
  const existing = await em.find(MembershipSchema, { user: userId, practice: actor.practiceId }, { populate: ['user'] });
  if (existing.length === 0) throw new NotFoundError('No such member in this practice.');
  const member = existing[0]!.user.$;

  const current = existing.filter((m) => !m.revokedAt).map((m) => m.role as Role);
  const reactivated = current.length === 0;
  const granted = roles.filter((r) => !current.includes(r));
  const revoked = current.filter((r) => !roles.includes(r));
  if (revoked.includes('admin')) {
    const admins = await em.count(MembershipSchema, { practice: actor.practiceId, role: 'admin', revokedAt: null });
    if (admins <= 1) throw new ConflictError('The practice needs at least one administrator.');
  }
  await em.transactional(async (tx) => {
    await grantRoles(tx, userId, actor.practiceId, granted);
    const now = new Date();
    for (const m of existing) if (revoked.includes(m.role as Role) && !m.revokedAt) tx.assign(m, { revokedAt: now });
    await tx.flush();
  });
  const about = { entityType: 'user', entityId: userId };
  if (reactivated) await audit(em, actor, { action: 'team.member_reactivated', ...about, detail: { member: member.email } });
  for (const role of granted) await audit(em, actor, { action: 'team.role_granted', ...about, detail: { role, member: member.email } });
  for (const role of revoked) await audit(em, actor, { action: 'team.role_revoked', ...about, detail: { role, member: member.email } });
  if (revoked.length > 0) await endSessions(em, userId, 'role_revoked', { actor });
  return roles;
}

/**
 * Deactivates a member: every role in the actor's practice is revoked at once and every
 * session of theirs ends, so they can neither use a session nor sign in to this practice.
 * Audited. Not oneself; never the last administrator.
 */
export async function deactivateMember(em: EntityManager, actor: Actor, userId: string): Promise<void> {
  assertCan(actor, 'team.manage');
  if (userId === actor.userId) throw notYourself('deactivate');
  const existing = await em.find(MembershipSchema, { user: userId, practice: actor.practiceId }, { populate: ['user'] });
  if (existing.length === 0) throw new NotFoundError('No such member in this practice.');
  const active = existing.filter((m) => !m.revokedAt);
  if (active.length === 0) throw new ConflictError('This member is already deactivated.');
  if (active.some((m) => m.role === 'admin')) {
    const admins = await em.count(MembershipSchema, { practice: actor.practiceId, role: 'admin', revokedAt: null });
    if (admins <= 1) throw new ConflictError('The practice needs at least one administrator.');
  }
  const now = new Date();
  for (const m of active) em.assign(m, { revokedAt: now, deactivatedAt: now });
  await em.flush();
  const member = existing[0]!.user.$;
  await audit(em, actor, {
    action: 'team.member_deactivated',
    entityType: 'user',
    entityId: userId,
    detail: { member: member.email, roles: sortRoles(active.map((m) => m.role as Role)) },
  });
  await endSessions(em, userId, 'deactivated', { actor });
}

async function grantRoles(em: EntityManager, userId: string, practiceId: string, roles: readonly Role[]) {
  for (const role of roles) {
    const m = await em.findOne(MembershipSchema, { user: userId, practice: practiceId, role });
    if (m) em.assign(m, { revokedAt: null, deactivatedAt: null });
    else em.create(MembershipSchema, { user: userId, practice: practiceId, role });
  }
}

export interface InvitationView {
  /** The invited account (for the page to compare with the signed-in user; not sent to the browser). */
  userId: string;
  email: string;
  practiceName: string;
  roles: string[];
  /** A new person: they choose a name and password through the link. */
  needsPassword: boolean;
  /** Someone with an account: they accept while signed in as that account. */
  needsSignIn: boolean;
}

/** True when the invited person already has an account (a password or a used sign-in link). */
const hasAccount = (u: { passwordHash?: string | null; emailVerified?: Date | null }) => Boolean(u.passwordHash || u.emailVerified);

/** The invitation a link names (with its user and practice), or why the link no longer works. */
async function usableInvitation(em: EntityManager, token: string) {
  const inv = await em.findOne(InvitationSchema, { tokenHash: hashToken(token) }, { populate: ['user', 'practice'] });
  if (!inv) return { ok: false as const, reason: 'This invitation link is not valid. Ask your practice administrator for a new one.' };
  if (inv.acceptedAt) return { ok: false as const, reason: 'This invitation has already been accepted. Sign in instead.' };
  if (inv.revokedAt) return { ok: false as const, reason: 'This invitation was withdrawn by the practice. Ask your practice administrator.' };
  if (inv.expiresAt < new Date()) return { ok: false as const, reason: 'This invitation has expired. Ask your practice administrator for a new one.' };
  return { ok: true as const, inv };
}

/** What the invitation page shows, or why the link no longer works. */
export async function lookupInvitation(
  em: EntityManager,
  token: string,
): Promise<{ ok: true; view: InvitationView } | { ok: false; reason: string }> {
  const found = await usableInvitation(em, token);
  if (!found.ok) return found;
  const { inv } = found;
  const existing = hasAccount(inv.user.$);
  return {
    ok: true,
    view: {
      userId: inv.user.id,
      email: inv.user.$.email,
      practiceName: inv.practice.$.name,
      roles: inv.roles.filter(isRole).map((r) => ROLE_LABELS[r]),
      needsPassword: !existing,
      needsSignIn: existing,
    },
  };
}

async function join(em: EntityManager, inv: Loaded<Invitation, 'user'>, origin: Origin) {
  const user = inv.user.$;
  await grantRoles(em, user.id, inv.practice.id, inv.roles.filter(isRole));
  inv.acceptedAt = new Date();
  await em.flush();
  await audit(
    em,
    null,
    { action: 'team.invitation_accepted', entityType: 'user', entityId: user.id, detail: { roles: inv.roles } },
    { practiceId: inv.practice.id, actorId: user.id, actorEmail: user.email, ip: origin.ip, userAgent: origin.userAgent },
  );
}

/**
 * A new person accepts through the link: sets their name and password once and joins with the
 * invitation's roles; the link cannot be used again. Someone who already has an account cannot
 * accept this way (the link alone does not prove it is them): see acceptInvitationSignedIn.
 */
export async function acceptInvitation(em: EntityManager, raw: unknown, origin: Origin): Promise<{ email: string }> {
  const input = parse(AcceptInvitationInput, raw);
  const found = await usableInvitation(em, input.token);
  if (!found.ok) throw new ValidationError(found.reason);
  const { inv } = found;
  const user = inv.user.$;
  if (hasAccount(user)) throw new ForbiddenError(`You already have a Lamina account: sign in as ${user.email} and open the link again to accept.`);
  user.name = input.name;
  user.passwordHash = await hashPassword(input.password);
  user.emailVerified = new Date();
  await join(em, inv, origin);
  return { email: user.email };
}

/** Someone with an account accepts while signed in as the invited account. */
export async function acceptInvitationSignedIn(em: EntityManager, userId: string, token: string, origin: Origin): Promise<{ practiceId: string }> {
  const found = await usableInvitation(em, String(token ?? ''));
  if (!found.ok) throw new ValidationError(found.reason);
  const { inv } = found;
  if (inv.user.id !== userId) throw new ForbiddenError(`This invitation is for ${inv.user.$.email}. Sign out and sign in as that account to accept.`);
  await join(em, inv, origin);
  return { practiceId: inv.practice.id };
}

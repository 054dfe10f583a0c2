import 'server-only';
import { createHash, randomBytes } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import { InvitationSchema, MembershipSchema, PracticeSchema, UserSchema, type User } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import type { Origin } from '@/lib/auth/origin';
import { hashPassword } from '@/lib/auth/password';
import { ROLE_LABELS, ROLES, type Role } from '@/lib/auth/roles';
import { InviteInput, SetRolesInput, AcceptInvitationInput } from '@/lib/schemas/auth';
import { env } from '@/lib/env';
import { sendMail } from '@/lib/mail/mailer';
import { InvitationEmail } from '@/lib/mail/templates/InvitationEmail';
import { audit } from './audit';
import { ConflictError, NotFoundError, ValidationError } from './errors';
import { parseInput as parse } from './parse';

const INVITATION_DAYS = 7;

export interface MemberRow {
  userId: string;
  email: string;
  name: string | null;
  roles: Role[];
  status: 'active' | 'invited' | 'no roles';
  lastSignInAt: string | null;
}

const hashToken = (token: string) => createHash('sha256').update(token).digest('hex');

/** The people of the actor's practice with their current roles (revoked ones shown as none). */
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
        status: u.passwordHash || u.emailVerified ? 'active' : 'invited',
        lastSignInAt: u.lastSignInAt?.toISOString() ?? null,
      } satisfies MemberRow);
    if (!m.revokedAt) row.roles.push(m.role as Role);
    byUser.set(u.id, row);
  }
  for (const row of byUser.values()) {
    row.roles.sort((a, b) => ROLES.indexOf(a) - ROLES.indexOf(b));
    if (row.roles.length === 0) row.status = 'no roles';
  }
  return [...byUser.values()];
}

/**
 * Invites a person by e-mail with the given roles in the actor's practice. The roles take
 * effect at once; the e-mailed link lets the person choose a password.
 */
export async function inviteMember(
  em: EntityManager,
  actor: Actor,
  raw: unknown,
): Promise<{ userId: string; invitationId: string }> {
  assertCan(actor, 'team.manage');
  const input = parse(InviteInput, raw);
  const practice = await em.findOneOrFail(PracticeSchema, actor.practiceId);
  const token = randomBytes(32).toString('base64url');

  const result = await em.transactional(async (tx) => {
    let user = await tx.findOne(UserSchema, { email: input.email });
    if (user) {
      const active = await tx.count(MembershipSchema, { user: user.id, practice: actor.practiceId, revokedAt: null });
      if (active > 0) throw new ConflictError(`${input.email} is already a member of this practice.`);
    } else {
      user = tx.create(UserSchema, { email: input.email, name: input.name } as never);
    }
    await grantRoles(tx, user, actor.practiceId, input.roles);
    const invitation = tx.create(InvitationSchema, {
      practice: actor.practiceId,
      user,
      invitedBy: actor.userId,
      tokenHash: hashToken(token),
      roles: input.roles,
      expiresAt: new Date(Date.now() + INVITATION_DAYS * 86_400_000),
    } as never);
    await tx.flush();
    return { userId: user.id, invitationId: invitation.id };
  });

  await sendMail({
    to: input.email,
    subject: `Invitation to ${practice.name} on Lamina`,
    template: InvitationEmail({
      url: `${env.APP_URL}/invite/${token}`,
      practiceName: practice.name,
      inviterName: actor.name ?? actor.email,
      roles: input.roles.map((r) => ROLE_LABELS[r]),
    }),
  });
  await audit(em, actor, {
    action: 'team.invited',
    entityType: 'user',
    entityId: result.userId,
    detail: { email: input.email, roles: input.roles },
  });
  return result;
}

/**
 * Sets a member's roles in the actor's practice: grants the new ones, revokes the others.
 * A revoked role stops working on the member's next request. The last administrator cannot
 * remove their own administration.
 */
export async function setMemberRoles(em: EntityManager, actor: Actor, userId: string, raw: unknown): Promise<Role[]> {
  assertCan(actor, 'team.manage');
  const { roles } = parse(SetRolesInput, raw);
  const existing = await em.find(MembershipSchema, { user: userId, practice: actor.practiceId });
  if (existing.length === 0) throw new NotFoundError('No such member in this practice.');

  const current = existing.filter((m) => !m.revokedAt).map((m) => m.role as Role);
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
  for (const role of granted) {
    await audit(em, actor, { action: 'team.role_granted', entityType: 'user', entityId: userId, detail: { role } });
  }
  for (const role of revoked) {
    await audit(em, actor, { action: 'team.role_revoked', entityType: 'user', entityId: userId, detail: { role } });
  }
  return roles;
}

async function grantRoles(em: EntityManager, user: User | string, practiceId: string, roles: readonly Role[]) {
  for (const role of roles) {
    const m = typeof user === 'string' || user.id ? await em.findOne(MembershipSchema, { user, practice: practiceId, role }) : null;
    if (m) m.revokedAt = null;
    else em.create(MembershipSchema, { user, practice: practiceId, role } as never);
  }
}

export interface InvitationView {
  email: string;
  practiceName: string;
  needsPassword: boolean;
}

/** The invitation a link names (with its user and practice), or why the link no longer works. */
async function usableInvitation(em: EntityManager, token: string) {
  const inv = await em.findOne(InvitationSchema, { tokenHash: hashToken(token) }, { populate: ['user', 'practice'] });
  if (!inv) return { ok: false as const, reason: 'This invitation link is not valid. Ask your practice administrator for a new one.' };
  if (inv.acceptedAt) return { ok: false as const, reason: 'This invitation has already been accepted. Sign in instead.' };
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
  return {
    ok: true,
    view: { email: inv.user.$.email, practiceName: inv.practice.$.name, needsPassword: !inv.user.$.passwordHash },
  };
}

/** Accepts an invitation: sets the name and password once; the link cannot be used again. */
export async function acceptInvitation(
  em: EntityManager,
  raw: unknown,
  origin: Origin,
): Promise<{ email: string }> {
  const input = parse(AcceptInvitationInput, raw);
  const found = await usableInvitation(em, input.token);
  if (!found.ok) throw new ValidationError(found.reason);
  const { inv } = found;
  const user = inv.user.$;
  user.name = input.name;
  if (!user.passwordHash) user.passwordHash = await hashPassword(input.password);
  user.emailVerified ??= new Date();
  inv.acceptedAt = new Date();
  await em.flush();
  await audit(
    em,
    null,
    { action: 'team.invitation_accepted', entityType: 'user', entityId: user.id },
    { practiceId: inv.practice.id, actorId: user.id, actorEmail: user.email, ip: origin.ip, userAgent: origin.userAgent },
  );
  return { email: user.email };
}

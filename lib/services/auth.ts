import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Redis } from 'ioredis';
import { MembershipSchema, UserSchema, PracticeSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import type { Origin } from '@/lib/auth/origin';
import { isRole, type Role } from '@/lib/auth/roles';
import { verifyPassword } from '@/lib/auth/password';
import { linkWaitMessage, passwordWaitMessage, signInThrottle, type ThrottlePolicy } from '@/lib/auth/rate-limit';
import { audit } from './audit';
import { RateLimitedError, ServiceError } from './errors';

export const WRONG_CREDENTIALS = 'Wrong e-mail or password.';

/**
 * Checks an e-mail and password. Throttled per account-and-address and per address with growing
 * waits (lib/auth/rate-limit.ts: never a lockout of the account itself); every success, failure
 * and throttled try is audited. Returns the user id, or throws a ServiceError with a user-safe
 * message.
 */
export async function verifyCredentials(
  em: EntityManager,
  r: Redis,
  policy: ThrottlePolicy,
  input: { email: string; password: string },
  origin: Origin,
): Promise<{ userId: string }> {
  const email = input.email.trim().toLowerCase();
  const throttle = signInThrottle(r, policy);
  const limit = await throttle.checkPassword(email, origin.ip);
  const user = await em.findOne(UserSchema, { email });
  const practiceId = user ? await firstPracticeId(em, user.id) : null;
  const trail = { actorId: user?.id ?? null, actorEmail: email, practiceId, ip: origin.ip, userAgent: origin.userAgent };

  if (limit.limited) {
    await audit(em, null, { action: 'auth.sign_in_limited', detail: { scope: limit.scope } }, trail);
    throw new RateLimitedError(passwordWaitMessage(limit), limit.retryAfterSeconds);
  }
  const ok = await verifyPassword(input.password, user?.passwordHash);
  if (!user || !ok || !practiceId) {
    const waitSeconds = await throttle.recordPasswordFailure(email, origin.ip);
    const reason = !user ? 'unknown_account' : !ok ? 'wrong_password' : 'no_active_role';
    await audit(em, null, { action: 'auth.sign_in_failed', detail: { method: 'password', reason, ...(waitSeconds ? { waitSeconds } : {}) } }, trail);
    throw new ServiceError(waitSeconds ? `${WRONG_CREDENTIALS} ${passwordWaitMessage({ limited: true, retryAfterSeconds: waitSeconds })}` : WRONG_CREDENTIALS, 401);
  }
  await throttle.clearPasswordFailures(email, origin.ip);
  user.lastSignInAt = new Date();
  await audit(em, null, { action: 'auth.sign_in', entityType: 'user', entityId: user.id, detail: { method: 'password' } }, trail);
  return { userId: user.id };
}

/** The practice a user acts in: the first (by name) where they hold an active role. */
export async function firstPracticeId(em: EntityManager, userId: string): Promise<string | null> {
  const m = await em.findOne(
    MembershipSchema,
    { user: userId, revokedAt: null },
    { populate: ['practice'], orderBy: { practice: { name: 'asc' } } },
  );
  return m ? m.practice.id : null;
}

/**
 * Loads the acting user fresh from the database: a role revoked a moment ago no longer
 * counts, whatever the session token says. Null when the user has no active role anywhere.
 */
export async function loadActor(
  em: EntityManager,
  userId: string,
  origin: Origin,
  preferredPracticeId?: string | null,
): Promise<Actor | null> {
  const user = await em.findOne(UserSchema, { id: userId });
  if (!user) return null;
  const memberships = await em.find(
    MembershipSchema,
    { user: userId, revokedAt: null },
    { populate: ['practice'], orderBy: { practice: { name: 'asc' }, role: 'asc' } },
  );
  if (memberships.length === 0) return null;
  const practiceId =
    memberships.find((m) => m.practice.id === preferredPracticeId)?.practice.id ?? memberships[0]!.practice.id;
  const inPractice = memberships.filter((m) => m.practice.id === practiceId);
  const roles = inPractice.map((m) => m.role).filter(isRole) as Role[];
  const practice = await em.findOneOrFail(PracticeSchema, practiceId);
  return {
    userId: user.id,
    email: user.email,
    name: user.name ?? null,
    practiceId,
    practiceName: practice.name,
    roles,
    ip: origin.ip,
    userAgent: origin.userAgent,
  };
}

/**
 * Takes one request for an e-mailed sign-in link (per account and per address, lib/auth/rate-limit.ts).
 * Counted whether or not the address has an account, so the answer says nothing about that. A
 * refused request is audited and answered with a plain message; a link already sent keeps working.
 */
export async function takeSignInLinkRequest(
  em: EntityManager,
  r: Redis,
  policy: ThrottlePolicy,
  rawEmail: string,
  origin: Origin,
): Promise<{ ok: true } | { ok: false; message: string; retryAfterSeconds: number }> {
  const email = rawEmail.trim().toLowerCase().slice(0, 254);
  const state = await signInThrottle(r, policy).takeLinkRequest(email, origin.ip);
  if (!state.limited) return { ok: true };
  const user = await em.findOne(UserSchema, { email });
  await audit(
    em,
    null,
    { action: 'auth.link_limited', detail: { scope: state.scope } },
    { actorId: user?.id ?? null, actorEmail: email, ip: origin.ip, userAgent: origin.userAgent },
  );
  return { ok: false, message: linkWaitMessage(state), retryAfterSeconds: state.retryAfterSeconds };
}

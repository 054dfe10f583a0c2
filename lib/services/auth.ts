import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Redis } from 'ioredis';
import { MembershipSchema, UserSchema, type AuditEvent, type User } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import type { Origin } from '@/lib/auth/origin';
import { isRole, type Role } from '@/lib/auth/roles';
import { verifyPassword } from '@/lib/auth/password';
import { linkWaitMessage, passwordWaitMessage, signInThrottle, type ThrottlePolicy } from '@/lib/auth/rate-limit';
import { audit, type AuditInput } from './audit';
import { RateLimitedError, ServiceError } from './errors';
import { isServiceUnavailable } from './unavailable';
import { knexOf, settingsOf, type SessionPractice } from './registry-common';

export const WRONG_CREDENTIALS = 'Wrong e-mail or password.';
export const SIGN_IN_UNAVAILABLE = 'Sign-in is paused for a moment: Lamina cannot reach the store that limits password tries. Your account is fine. Try again in a minute.';

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
  const limit = await throttle.checkPassword(email, origin.ip).catch((e: unknown) => {
    // Fail closed: the throttle is what stops password guessing, so without its store no password
    // is checked at all (a wrong guess could not be counted). The e-mailed link needs Redis too.
    if (isServiceUnavailable(e)) throw new ServiceError(SIGN_IN_UNAVAILABLE, 503, undefined, 'unavailable');
    throw e;
  });
  const user = await em.findOne(UserSchema, { email });
  const practiceIds = user ? await activePracticeIds(em, user.id) : [];
  const trail = { actorId: user?.id ?? null, actorEmail: email, ip: origin.ip, userAgent: origin.userAgent };

  if (limit.limited) {
    await auditInPractices(em, practiceIds, { action: 'auth.sign_in_limited', detail: { scope: limit.scope } }, trail);
    throw new RateLimitedError(passwordWaitMessage(limit), limit.retryAfterSeconds);
  }
  const ok = await verifyPassword(input.password, user?.passwordHash);
  if (!user || !ok || practiceIds.length === 0) {
    const waitSeconds = await throttle.recordPasswordFailure(email, origin.ip);
    const reason = !user ? 'unknown_account' : !ok ? 'wrong_password' : 'no_active_role';
    await auditInPractices(em, practiceIds, { action: 'auth.sign_in_failed', detail: { method: 'password', reason, ...(waitSeconds ? { waitSeconds } : {}) } }, trail);
    throw new ServiceError(waitSeconds ? `${WRONG_CREDENTIALS} ${passwordWaitMessage({ limited: true, retryAfterSeconds: waitSeconds })}` : WRONG_CREDENTIALS, 401);
  }
  await throttle.clearPasswordFailures(email, origin.ip);
  user.lastSignInAt = new Date();
  await auditInPractices(em, practiceIds, { action: 'auth.sign_in', entityType: 'user', entityId: user.id, detail: { method: 'password' } }, trail);
  return { userId: user.id };
}

/**
 * Writes an event about a person into the trail of every practice they belong to (a sign-in
 * belongs to all of them; none is picked), or into no practice's trail when they have none.
 */
export async function auditInPractices(em: EntityManager, practiceIds: readonly string[], input: AuditInput, extra: Partial<AuditEvent>) {
  if (practiceIds.length === 0) {
    await audit(em, null, input, { ...extra, practiceId: null });
    return;
  }
  for (const practiceId of practiceIds) await audit(em, null, input, { ...extra, practiceId });
}

/**
 * The practices where a user holds an active role, in no meaningful order: callers never pick
 * one of several (the person chooses, lib/auth/options.ts).
 */
export async function activePracticeIds(em: EntityManager, userId: string): Promise<string[]> {
  const ms = await em.find(MembershipSchema, { user: userId, revokedAt: null }, { fields: ['practice'] });
  return [...new Set(ms.map((m) => m.practice.id))];
}

/** What a session token says about itself (lib/auth/options.ts writes it). */
export interface SessionClaims {
  /** The user's session version when the token was issued; a token without one is stale. */
  sessionVersion: number | null | undefined;
  /** The practice chosen for this session, if any. */
  practiceId?: string | null;
}

export interface PracticeChoice {
  id: string;
  name: string;
}

/** The outcome of reading a session: an actor, a person who must first choose a practice, or nobody. */
export type SessionState =
  | { kind: 'actor'; actor: Actor; practices: PracticeChoice[]; practice: SessionPractice }
  | { kind: 'choose_practice'; userId: string; practices: PracticeChoice[] }
  | { kind: 'none' };

/**
 * Reads the acting user fresh from the database on every request: a session whose version is
 * behind the user's (signed out, password changed, role revoked, deactivated, "sign out
 * everywhere") is over; a role revoked a moment ago no longer counts. A user in several
 * practices acts in the one chosen for the session; without a choice they must choose first.
 */
export async function resolveSession(
  em: EntityManager,
  userId: string,
  origin: Origin,
  claims: SessionClaims,
): Promise<SessionState> {
  // one lean read on every request: the user's session version and live memberships with their practices' names
  const rows = (await knexOf(em)('app_user as u')
    .leftJoin('membership as m', (j) => j.on('m.user_id', 'u.id').andOnNull('m.revoked_at'))
    .leftJoin('practice as p', 'p.id', 'm.practice_id')
    .where('u.id', userId)
    .orderBy([{ column: 'p.name' }, { column: 'm.role' }])
    .select(
      'u.email',
      'u.name',
      'u.session_version',
      'm.role',
      'p.id as practice_id',
      'p.name as practice_name',
      // the practice's settings come along: most requests need them (practiceSettings, recallSettings)
      'p.tooth_notation',
      'p.time_zone',
      'p.recall_policy',
      'p.min_observation_days',
      'p.reminder_policy',
    )) as {
    email: string;
    name: string | null;
    session_version: number;
    role: string | null;
    practice_id: string | null;
    practice_name: string | null;
    tooth_notation: string | null;
    time_zone: string | null;
    recall_policy: unknown;
    min_observation_days: number | null;
    reminder_policy: unknown;
  }[];
  const user = rows[0];
  if (!user || claims.sessionVersion == null || user.session_version !== claims.sessionVersion) return { kind: 'none' };
  const memberships = rows.filter((r) => r.practice_id !== null && r.role !== null);
  if (memberships.length === 0) return { kind: 'none' };
  const practices: PracticeChoice[] = [];
  for (const m of memberships) {
    if (!practices.some((p) => p.id === m.practice_id)) practices.push({ id: m.practice_id!, name: m.practice_name! });
  }
  const chosen = practices.find((p) => p.id === claims.practiceId) ?? (practices.length === 1 ? practices[0] : undefined);
  if (!chosen) return { kind: 'choose_practice', userId, practices };
  const roles = memberships
    .filter((m) => m.practice_id === chosen.id)
    .map((m) => m.role)
    .filter(isRole) as Role[];
  const p = memberships.find((m) => m.practice_id === chosen.id)!;
  return {
    kind: 'actor',
    practices,
    practice: {
      settings: settingsOf({ id: chosen.id, toothNotation: p.tooth_notation!, timeZone: p.time_zone!, recallPolicy: p.recall_policy, minObservationDays: p.min_observation_days! }),
      name: chosen.name,
      reminderPolicy: p.reminder_policy,
    },
    actor: {
      userId,
      email: user.email,
      name: user.name ?? null,
      practiceId: chosen.id,
      practiceName: chosen.name,
      roles,
      ip: origin.ip,
      userAgent: origin.userAgent,
    },
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

/** The actor of a session, or null (not signed in, session ended, no role, or no practice chosen yet). */
export async function loadActor(em: EntityManager, userId: string, origin: Origin, claims: SessionClaims): Promise<Actor | null> {
  const s = await resolveSession(em, userId, origin, claims);
  return s.kind === 'actor' ? s.actor : null;
}

/**
 * Chooses the practice a session acts in. Only a practice where the user holds an active role;
 * the choice is audited in that practice's trail. Returns the practice id, or null when refused.
 */
export async function choosePractice(em: EntityManager, userId: string, practiceId: unknown, origin: Origin): Promise<string | null> {
  if (typeof practiceId !== 'string') return null;
  const ids = await activePracticeIds(em, userId);
  if (!ids.includes(practiceId)) return null;
  const user = await em.findOneOrFail(UserSchema, { id: userId });
  await audit(
    em,
    null,
    { action: 'auth.practice_chosen', entityType: 'practice', entityId: practiceId },
    { practiceId, actorId: userId, actorEmail: user.email, ip: origin.ip, userAgent: origin.userAgent?.slice(0, 300) ?? null },
  );
  return practiceId;
}

export type SessionEndReason = 'sign_out' | 'sign_out_everywhere' | 'password_changed' | 'role_revoked' | 'deactivated';

/**
 * Ends every session of a user: raises their session version, so each existing token fails
 * its next request. Audited in each of the user's practices (by the user, or by the actor who
 * caused it).
 */
export async function endSessions(
  em: EntityManager,
  userId: string,
  reason: SessionEndReason,
  by: { actor: Actor } | { origin: Origin },
): Promise<void> {
  await em.getConnection().execute('update "app_user" set "session_version" = "session_version" + 1 where "id" = ?', [userId]);
  const cached = em.getUnitOfWork().getById<User>('User', userId);
  if (cached) await em.refresh(cached);
  if ('actor' in by) {
    await audit(em, by.actor, { action: 'auth.sessions_ended', entityType: 'user', entityId: userId, detail: { reason } });
    return;
  }
  const user = await em.findOne(UserSchema, { id: userId });
  await auditInPractices(
    em,
    await activePracticeIds(em, userId),
    { action: 'auth.sessions_ended', entityType: 'user', entityId: userId, detail: { reason } },
    { actorId: userId, actorEmail: user?.email ?? null, ip: by.origin.ip, userAgent: by.origin.userAgent?.slice(0, 300) ?? null },
  );
}

/** The session version a new token carries. */
export async function currentSessionVersion(em: EntityManager, userId: string): Promise<number | null> {
  const rows = await em.getConnection().execute<{ session_version: number }[]>('select "session_version" from "app_user" where "id" = ?', [userId]);
  return rows[0]?.session_version ?? null;
}

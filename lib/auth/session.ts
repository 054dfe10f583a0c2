import 'server-only';
import { cache } from 'react';
import { getToken } from 'next-auth/jwt';
import { cookies, headers } from 'next/headers';
import { forbidden, redirect } from 'next/navigation';
import type { EntityManager } from '@mikro-orm/postgresql';
import { requestEm } from '@/lib/db';
import { resolveSession, type PracticeChoice } from '@/lib/services/auth';
import { readWithSession } from '@/lib/services/registry-common';
import { env } from '@/lib/env';
import { decodeSessionToken } from './session-token';
import { can, type Permission } from './permissions';
import type { Actor } from './actor';
import { originFrom } from './origin';

export interface RequestContext {
  em: EntityManager;
  actor: Actor | null;
  /** The signed-in user (with a current session), also before they chose a practice. */
  userId: string | null;
  /** The practices the signed-in user may act in (for the switcher); empty when signed out. */
  practices: PracticeChoice[];
  /** Signed in, in several practices, and none chosen for this session yet. */
  mustChoosePractice: boolean;
}

/**
 * The session cookie's claims (next-auth's `getToken`: the cookie, its chunks joined, decrypted and
 * its expiry checked), or null. This is what next-auth's `getServerSession` reads too, without its
 * whole sign-in handler per request and a refreshed cookie it cannot set from here. Only the
 * cookie counts: no headers are handed over, so an Authorization header is not read as a session.
 */
async function sessionClaims(): Promise<{ userId?: string; sv?: number; practiceId?: string | null } | null> {
  const token = await getToken({
    req: { cookies: await cookies(), headers: {} } as unknown as Parameters<typeof getToken>[0]['req'],
    secret: env.NEXTAUTH_SECRET,
    secureCookie: env.https,
    decode: decodeSessionToken,
  });
  if (!token?.sub) return null;
  return { userId: token.sub, sv: token.sv as number | undefined, practiceId: (token.practiceId as string | null | undefined) ?? null };
}

/**
 * The request's EntityManager fork and acting user, loaded once per request (React cache)
 * and shared by the layout, the page and its components. The session's version and chosen
 * practice are checked against the database here, on every request.
 */
export const getRequestContext = cache(async (): Promise<RequestContext> => {
  const em = await requestEm();
  const session = await sessionClaims();
  if (!session?.userId) return { em, actor: null, userId: null, practices: [], mustChoosePractice: false };
  const s = await resolveSession(em, session.userId, originFrom(await headers()), {
    sessionVersion: session.sv,
    practiceId: session.practiceId,
  });
  if (s.kind === 'actor') {
    readWithSession(em, s.practice);
    return { em, actor: s.actor, userId: s.actor.userId, practices: s.practices, mustChoosePractice: false };
  }
  if (s.kind === 'choose_practice') return { em, actor: null, userId: s.userId, practices: s.practices, mustChoosePractice: true };
  return { em, actor: null, userId: null, practices: [], mustChoosePractice: false };
});

/**
 * For pages and server actions: a signed-in actor, or a redirect to sign-in (or to the practice
 * choice when the person belongs to several and has not chosen); with a
 * permission, Next's 403 page when the actor's roles do not grant it.
 */
export async function requireActor(permission?: Permission, returnTo = '/'): Promise<{ em: EntityManager; actor: Actor }> {
  const { em, actor, mustChoosePractice } = await getRequestContext();
  if (!actor && mustChoosePractice) redirect(`/choose-practice?callbackUrl=${encodeURIComponent(returnTo)}`);
  if (!actor) redirect(`/sign-in?callbackUrl=${encodeURIComponent(returnTo)}`);
  if (permission && !can(actor.roles, permission)) forbidden();
  return { em, actor };
}

import 'server-only';
import { cache } from 'react';
import { getServerSession } from 'next-auth';
import { cookies, headers } from 'next/headers';
import { forbidden, redirect } from 'next/navigation';
import type { EntityManager } from '@mikro-orm/postgresql';
import { requestEm } from '@/lib/db';
import { loadActor } from '@/lib/services/auth';
import { authOptions } from './options';
import { can, type Permission } from './permissions';
import type { Actor } from './actor';
import { originFrom } from './origin';

export const PRACTICE_COOKIE = 'lamina-practice';

/**
 * The request's EntityManager fork and acting user, loaded once per request (React cache)
 * and shared by the layout, the page and its components.
 */
export const getRequestContext = cache(async (): Promise<{ em: EntityManager; actor: Actor | null }> => {
  const em = await requestEm();
  const session = await getServerSession(authOptions);
  const userId = (session as { userId?: string } | null)?.userId;
  if (!userId) return { em, actor: null };
  const [h, c] = await Promise.all([headers(), cookies()]);
  const actor = await loadActor(em, userId, originFrom(h), c.get(PRACTICE_COOKIE)?.value ?? null);
  return { em, actor };
});

/**
 * For pages and server actions: a signed-in actor, or a redirect to sign-in; with a
 * permission, Next's 403 page when the actor's roles do not grant it.
 */
export async function requireActor(permission?: Permission, returnTo = '/'): Promise<{ em: EntityManager; actor: Actor }> {
  const { em, actor } = await getRequestContext();
  if (!actor) redirect(`/sign-in?callbackUrl=${encodeURIComponent(returnTo)}`);
  if (permission && !can(actor.roles, permission)) forbidden();
  return { em, actor };
}

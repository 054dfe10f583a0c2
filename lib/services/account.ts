import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { UserSchema } from '@/entities';
import type { Actor } from '@/lib/auth/actor';
import { hashPassword, verifyPassword } from '@/lib/auth/password';
import { ChangePasswordInput } from '@/lib/schemas/auth';
import { audit } from './audit';
import { endSessions } from './auth';
import { ValidationError } from './errors';
import { parseInput as parse } from './parse';

/**
 * The signed-in person changes their own password. Every session of theirs ends (this one
 * too): whoever else held one must sign in with the new password.
 */
export async function changePassword(em: EntityManager, actor: Actor, raw: unknown): Promise<void> {
  const input = parse(ChangePasswordInput, raw);
  const user = await em.findOneOrFail(UserSchema, { id: actor.userId });
  if (!(await verifyPassword(input.current, user.passwordHash))) {
    throw new ValidationError('The current password is not right.', { current: ['The current password is not right.'] });
  }
  user.passwordHash = await hashPassword(input.password);
  await em.flush();
  await audit(em, actor, { action: 'auth.password_changed', entityType: 'user', entityId: actor.userId });
  await endSessions(em, actor.userId, 'password_changed', { actor });
}

/** "Sign out everywhere": ends every session of the signed-in person, on every device. */
export async function signOutEverywhere(em: EntityManager, actor: Actor): Promise<void> {
  await endSessions(em, actor.userId, 'sign_out_everywhere', { actor });
}

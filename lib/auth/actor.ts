import type { Role } from './roles';
import { can, type Permission } from './permissions';
import { ForbiddenError } from '@/lib/services/errors';

/** The signed-in person acting in one practice, as services see them. Loaded fresh per request. */
export interface Actor {
  userId: string;
  email: string;
  name: string | null;
  practiceId: string;
  practiceName: string;
  roles: Role[];
  /** Where the request came from, for the audit trail. */
  ip: string | null;
  userAgent: string | null;
}

/** Throws ForbiddenError unless the actor's roles grant the permission. */
export function assertCan(actor: Actor, permission: Permission): void {
  if (!can(actor.roles, permission)) throw new ForbiddenError();
}

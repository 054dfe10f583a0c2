import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { ROLES } from '../lib/auth/roles';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/**
 * One role held by one user in one practice. A user may hold several roles.
 * Created when the person accepts an invitation. Revoking sets `revokedAt`; the row stays so the
 * audit trail can name it.
 */
export const MembershipSchema = defineEntity({
  name: 'Membership',
  tableName: 'membership',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    user: p.manyToOne(UserSchema).ref().deleteRule('cascade'),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    role: p.enum([...ROLES]),
    grantedAt: p.datetime().onCreate(() => new Date()),
    revokedAt: p.datetime().nullable(),
    /** Set when the member was deactivated (every role revoked at once); cleared when they rejoin. */
    deactivatedAt: p.datetime().nullable(),
  },
  uniques: [{ properties: ['user', 'practice', 'role'] }],
});

export type Membership = InferEntity<typeof MembershipSchema>;

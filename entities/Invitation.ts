import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';
import { PracticeSchema } from './Practice';
import { UserSchema } from './User';

/**
 * An e-mailed invitation to join a practice with the given roles. Only a hash of its token is
 * stored. The roles become memberships only when the person accepts.
 */
export const InvitationSchema = defineEntity({
  name: 'Invitation',
  tableName: 'invitation',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    practice: p.manyToOne(PracticeSchema).ref().deleteRule('cascade'),
    user: p.manyToOne(UserSchema).ref().deleteRule('cascade'),
    invitedBy: p.manyToOne(UserSchema).ref().nullable().deleteRule('set null'),
    tokenHash: p.string().length(64).unique().hidden(),
    roles: p.array<string>(),
    createdAt: p.datetime().onCreate(() => new Date()),
    expiresAt: p.datetime(),
    acceptedAt: p.datetime().nullable(),
    /** Withdrawn by an administrator before it was accepted. */
    revokedAt: p.datetime().nullable(),
  },
});

export type Invitation = InferEntity<typeof InvitationSchema>;

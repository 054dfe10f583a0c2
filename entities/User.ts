import { defineEntity, p, type InferEntity } from '@mikro-orm/core';
import { randomUUID } from 'node:crypto';

/** A person who signs in. Their roles live in Membership, one row per practice and role. */
export const UserSchema = defineEntity({
  name: 'User',
  tableName: 'app_user',
  properties: {
    id: p.uuid().primary().onCreate(() => randomUUID()),
    /** Stored lower-case; the sign-in identity. */
    email: p.string().length(254).unique(),
    name: p.string().length(160).nullable(),
    /** bcrypt hash; null until an invited user sets a password. */
    passwordHash: p.string().length(100).nullable().hidden().default(null),
    emailVerified: p.datetime().nullable(),
    createdAt: p.datetime().onCreate(() => new Date()),
    lastSignInAt: p.datetime().nullable(),
    /** Carried in the session token and compared on every request; raising it ends every session. */
    sessionVersion: p.integer().default(0),
  },
});

export type User = InferEntity<typeof UserSchema>;

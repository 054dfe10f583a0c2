import { defineEntity, p, type InferEntity } from '@mikro-orm/core';

/** next-auth's e-mail sign-in link tokens (it stores them hashed). Single use, expiring. */
export const VerificationTokenSchema = defineEntity({
  name: 'VerificationToken',
  tableName: 'verification_token',
  properties: {
    identifier: p.string().length(254).primary(),
    token: p.string().length(128).primary(),
    expires: p.datetime(),
  },
  primaryKeys: ['identifier', 'token'],
});

export type VerificationToken = InferEntity<typeof VerificationTokenSchema>;

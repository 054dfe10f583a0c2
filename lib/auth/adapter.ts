import 'server-only';
import type { Adapter, AdapterUser } from 'next-auth/adapters';
import { UserSchema, VerificationTokenSchema, type User } from '@/entities';
import { requestEm } from '@/lib/db';

/**
 * The small next-auth adapter the e-mail sign-in link needs, on MikroORM 6 (the published
 * adapters target MikroORM 5). Sessions are JWTs, so only users and verification tokens are
 * stored. Lamina has no self sign-up: an unknown address never gets an account here.
 */
const toAdapterUser = (u: User): AdapterUser => ({
  id: u.id,
  email: u.email,
  name: u.name,
  emailVerified: u.emailVerified ?? null,
});

export function laminaAdapter(): Adapter {
  return {
    async createUser() {
      throw new Error('Lamina accounts are created by invitation only.');
    },
    async getUser(id) {
      const u = await (await requestEm()).findOne(UserSchema, { id });
      return u ? toAdapterUser(u) : null;
    },
    async getUserByEmail(email) {
      const u = await (await requestEm()).findOne(UserSchema, { email: email.toLowerCase() });
      return u ? toAdapterUser(u) : null;
    },
    async getUserByAccount() {
      return null; // no OAuth accounts
    },
    async updateUser(patch) {
      const em = await requestEm();
      const u = await em.findOneOrFail(UserSchema, { id: patch.id });
      if (patch.emailVerified !== undefined) u.emailVerified = patch.emailVerified;
      await em.flush();
      return toAdapterUser(u);
    },
    async linkAccount() {
      throw new Error('Lamina does not link external accounts.');
    },
    async createVerificationToken(token) {
      const em = await requestEm();
      em.create(VerificationTokenSchema, { identifier: token.identifier, token: token.token, expires: token.expires });
      await em.flush();
      return token;
    },
    async useVerificationToken({ identifier, token }) {
      const em = await requestEm();
      const row = await em.findOne(VerificationTokenSchema, { identifier, token });
      if (!row) return null;
      const used = { identifier: row.identifier, token: row.token, expires: row.expires };
      await em.remove(row).flush();
      return used;
    },
  };
}

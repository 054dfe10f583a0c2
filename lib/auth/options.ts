import 'server-only';
import type { NextAuthOptions } from 'next-auth';
import CredentialsProvider from 'next-auth/providers/credentials';
import EmailProvider from 'next-auth/providers/email';
import { env } from '@/lib/env';
import { requestEm } from '@/lib/db';
import { redisReady } from '@/lib/redis';
import { sendMail } from '@/lib/mail/mailer';
import { SignInLinkEmail } from '@/lib/mail/templates/SignInLinkEmail';
import { SignInInput } from '@/lib/schemas/auth';
import { activePracticeIds, auditInPractices, choosePractice, currentSessionVersion, endSessions, SIGN_IN_UNAVAILABLE, verifyCredentials } from '@/lib/services/auth';
import { ServiceError } from '@/lib/services/errors';
import { UserSchema } from '@/entities';
import { laminaAdapter } from './adapter';
import { decodeSessionToken, encodeSessionToken } from './session-token';
import { originFrom } from './origin';
import { safeReturnPath } from '@/lib/security/return-path';
import { headers } from 'next/headers';

/**
 * next-auth configuration: e-mail + password, and an e-mailed sign-in link through the same
 * mailer. Sessions are JWTs carrying the user id, the user's session version and the practice
 * chosen for the session; roles are read from the database on every request and the version is
 * compared there (lib/services/auth.ts resolveSession), so a revoked role or an ended session
 * stops working at once.
 */
export const authOptions: NextAuthOptions = {
  secret: env.NEXTAUTH_SECRET,
  session: { strategy: 'jwt', maxAge: 12 * 60 * 60 },
  // next-auth's token format, its key derived once (lib/auth/session-token.ts)
  jwt: { encode: encodeSessionToken, decode: decodeSessionToken },
  // Secure (and __Secure-/__Host- prefixed) session cookies whenever the public URL is https.
  useSecureCookies: env.https,
  pages: { signIn: '/sign-in', verifyRequest: '/sign-in/check-email', error: '/sign-in' },
  adapter: laminaAdapter(),
  providers: [
    CredentialsProvider({
      id: 'credentials',
      name: 'E-mail and password',
      credentials: { email: { type: 'email' }, password: { type: 'password' } },
      async authorize(credentials, req) {
        const parsed = SignInInput.safeParse(credentials ?? {});
        if (!parsed.success) throw new Error(parsed.error.issues[0]?.message ?? 'Enter your e-mail and password.');
        const em = await requestEm();
        let r;
        try {
          r = await redisReady();
        } catch {
          throw new Error(SIGN_IN_UNAVAILABLE);
        }
        try {
          const { userId } = await verifyCredentials(
            em,
            r,
            env.signInThrottle,
            parsed.data,
            originFrom(req?.headers ?? {}),
          );
          await em.flush();
          return { id: userId, email: parsed.data.email };
        } catch (e) {
          if (e instanceof ServiceError) throw new Error(e.message);
          throw e;
        }
      },
    }),
    EmailProvider({
      server: env.SMTP_URL,
      from: env.MAIL_FROM,
      maxAge: 24 * 60 * 60,
      async sendVerificationRequest({ identifier, url }) {
        await sendMail({
          to: identifier,
          subject: 'Your Lamina sign-in link',
          template: SignInLinkEmail({ url, host: new URL(url).host }),
        });
      },
    }),
  ],
  callbacks: {
    /** Only invited people with an active role may receive or use a sign-in link. */
    async signIn({ user, account, email }) {
      if (account?.provider !== 'email') return true;
      const em = await requestEm();
      const known = await em.findOne(UserSchema, { email: (user.email ?? '').toLowerCase() });
      if (!known || (await activePracticeIds(em, known.id)).length === 0) {
        // Say nothing about whether the address exists: the page shows the same message either way.
        return `${env.APP_URL}${email?.verificationRequest ? '/sign-in/check-email' : '/sign-in?error=AccessDenied'}`;
      }
      return true;
    },
    /** After sign-in or sign-out, only a path on Lamina itself (lib/security/return-path.ts). */
    redirect({ url, baseUrl }) {
      if (url.startsWith(`${baseUrl}/`)) return `${baseUrl}${safeReturnPath(url.slice(baseUrl.length))}`;
      return `${baseUrl}${safeReturnPath(url)}`;
    },
    async jwt({ token, user, trigger, session }) {
      if (user) {
        // A new session: it carries the user's current version; with exactly one practice that
        // practice is the session's, with several the person chooses (nothing picks by name).
        const em = await requestEm();
        token.sub = user.id;
        token.sv = await currentSessionVersion(em, user.id);
        const practices = await activePracticeIds(em, user.id);
        token.practiceId = practices.length === 1 ? practices[0] : null;
      } else if (trigger === 'update' && token.sub) {
        // The practice switcher (components/shell/practice.ts): only a practice the user belongs to,
        // and only for a session that has not ended.
        const em = await requestEm();
        if ((await currentSessionVersion(em, token.sub)) !== token.sv) return token;
        const chosen = await choosePractice(
          em,
          token.sub,
          (session as { practiceId?: unknown } | undefined)?.practiceId,
          originFrom(await headers()),
        );
        if (chosen) token.practiceId = chosen;
      }
      return token;
    },
    async session({ session, token }) {
      return { ...session, userId: token.sub, sv: token.sv, practiceId: token.practiceId ?? null };
    },
  },
  events: {
    async signIn({ user, account }) {
      if (account?.provider !== 'email') return; // password sign-ins are audited in verifyCredentials
      const em = await requestEm();
      const u = await em.findOne(UserSchema, { id: user.id });
      if (!u) return;
      u.lastSignInAt = new Date();
      await auditInPractices(
        em,
        await activePracticeIds(em, u.id),
        { action: 'auth.sign_in', entityType: 'user', entityId: u.id, detail: { method: 'link' } },
        { actorId: u.id, actorEmail: u.email },
      );
    },
    /** Signing out ends the session for good: the version the old cookie carries no longer matches. */
    async signOut({ token }) {
      if (!token?.sub) return;
      const em = await requestEm();
      // Already ended (password changed, "sign out everywhere"): nothing more to end.
      if ((await currentSessionVersion(em, token.sub)) !== token.sv) return;
      await endSessions(em, token.sub, 'sign_out', { origin: originFrom(await headers()) });
    },
  },
};

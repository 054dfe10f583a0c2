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
import { firstPracticeId, verifyCredentials } from '@/lib/services/auth';
import { audit } from '@/lib/services/audit';
import { ServiceError } from '@/lib/services/errors';
import { UserSchema } from '@/entities';
import { laminaAdapter } from './adapter';
import { originFrom } from './origin';
import { safeReturnPath } from '@/lib/security/return-path';

/**
 * next-auth configuration: e-mail + password, and an e-mailed sign-in link through the same
 * mailer. Sessions are JWTs carrying only the user id; roles are read from the database on
 * every request (lib/auth/session.ts), so a revoked role stops working at once.
 */
export const authOptions: NextAuthOptions = {
  secret: env.NEXTAUTH_SECRET,
  session: { strategy: 'jwt', maxAge: 12 * 60 * 60 },
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
          throw new Error('Sign-in is unavailable for a moment. Try again shortly.');
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
      if (!known || !(await firstPracticeId(em, known.id))) {
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
    async jwt({ token, user }) {
      if (user) token.sub = user.id;
      return token;
    },
    async session({ session, token }) {
      return { ...session, userId: token.sub };
    },
  },
  events: {
    async signIn({ user, account }) {
      if (account?.provider !== 'email') return; // password sign-ins are audited in verifyCredentials
      const em = await requestEm();
      const u = await em.findOne(UserSchema, { id: user.id });
      if (!u) return;
      u.lastSignInAt = new Date();
      await audit(
        em,
        null,
        { action: 'auth.sign_in', entityType: 'user', entityId: u.id, detail: { method: 'link' } },
        { actorId: u.id, actorEmail: u.email, practiceId: await firstPracticeId(em, u.id) },
      );
    },
  },
};

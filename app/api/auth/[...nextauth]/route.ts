import NextAuth from 'next-auth';
import { authOptions } from '@/lib/auth/options';
import { originFrom } from '@/lib/auth/origin';
import { requestEm } from '@/lib/db';
import { env } from '@/lib/env';
import { redisReady } from '@/lib/redis';
import { LinkSignInInput } from '@/lib/schemas/auth';
import { takeSignInLinkRequest } from '@/lib/services/auth';

const nextAuth = NextAuth(authOptions);

/**
 * next-auth's routes. A request for an e-mailed sign-in link (POST /api/auth/signin/email) is
 * counted first (lib/auth/rate-limit.ts); over the limit it is answered 429 with next-auth's
 * JSON shape, the plain message as its `error`, so the sign-in form can show it; an address
 * that is no e-mail address (a NUL, say) is answered 422 the same way.
 */
async function POST(req: Request, ctx: { params: Promise<{ nextauth: string[] }> }) {
  const { nextauth } = await ctx.params;
  if (nextauth.join('/') === 'signin/email') {
    const form = await req
      .clone()
      .formData()
      .catch(() => null);
    const parsed = LinkSignInInput.safeParse({ email: form?.get('email') });
    if (!parsed.success) return refusal(parsed.error.issues[0]?.message ?? 'Enter a valid e-mail address.', 422, 0);
    const refused = await linkRefusal(req, parsed.data.email);
    if (refused) return refused;
  }
  return nextAuth(req, ctx);
}

async function linkRefusal(req: Request, email: string): Promise<Response | null> {
  let taken;
  try {
    taken = await takeSignInLinkRequest(await requestEm(), await redisReady(), env.signInThrottle, email, originFrom(req.headers));
  } catch {
    return refusal('Sign-in links cannot be sent for a moment. Try again shortly.', 503, 5);
  }
  return taken.ok ? null : refusal(taken.message, 429, taken.retryAfterSeconds);
}

function refusal(message: string, status: number, retryAfterSeconds: number): Response {
  const url = `${env.APP_URL}/sign-in?error=${encodeURIComponent(message)}`;
  const headers: Record<string, string> = { 'Cache-Control': 'no-store' };
  if (retryAfterSeconds > 0) headers['Retry-After'] = String(retryAfterSeconds);
  return Response.json({ url, error: message }, { status, headers });
}

export { nextAuth as GET, POST };

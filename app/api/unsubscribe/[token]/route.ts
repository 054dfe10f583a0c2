import { NextResponse } from 'next/server';
import { requestEm } from '@/lib/db';
import { env } from '@/lib/env';
import { originFrom } from '@/lib/auth/origin';
import { unsubscribe } from '@/lib/services/recall-replies';

/**
 * The List-Unsubscribe URL of every reminder. Public: the signed token is the credential.
 *
 * POST — RFC 8058 one-click: the mail program posts "List-Unsubscribe=One-Click" without cookies;
 *        the recall-contact consent is withdrawn at once. 200 with a short text; a refused token
 *        (tampered, expired, unknown) 400 and nothing changes.
 * GET  — a mail program without one-click opens the URL in a browser: 303 to the unsubscribe page,
 *        which asks for a button press (a GET never changes anything: mail scanners follow links).
 */
export const dynamic = 'force-dynamic';

type Ctx = { params: Promise<{ token: string }> };

export async function POST(req: Request, ctx: Ctx): Promise<Response> {
  const { token } = await ctx.params;
  try {
    const result = await unsubscribe(await requestEm(), token, originFrom(req.headers), 'one_click');
    return new NextResponse(result.ok ? result.message : result.message, {
      status: result.ok ? 200 : 400,
      headers: { 'Content-Type': 'text/plain; charset=utf-8', 'Cache-Control': 'no-store' },
    });
  } catch (e) {
    console.error('[unsubscribe] unexpected error', e);
    return new NextResponse('Something went wrong on our side. Nothing was changed.', { status: 500, headers: { 'Content-Type': 'text/plain; charset=utf-8' } });
  }
}

export async function GET(_req: Request, ctx: Ctx): Promise<Response> {
  const { token } = await ctx.params;
  return NextResponse.redirect(new URL(`/u/${encodeURIComponent(token)}`, env.APP_URL), 303);
}

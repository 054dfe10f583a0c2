import { requestEm } from '@/lib/db';
import { env } from '@/lib/env';
import { errorResponse, json } from '@/lib/http';
import { originFrom } from '@/lib/auth/origin';
import { filmTooLargeMessage } from '@/lib/films/process';
import { redisReady } from '@/lib/redis';
import { bodyTypeRefusal, crossSiteRefusal, originOf } from '@/lib/security/request-guard';
import { NotFoundError, ServiceError, ValidationError } from '@/lib/services/errors';
import { isWellFormedToken } from '@/lib/referrers/upload-token';
import { filmMaxBytes } from '@/lib/services/films';
import { LinkGoneError, UPLOAD_MAX_FILES, openUploadLink, receiveReferrerUpload, takeUploadRequest } from '@/lib/services/referrer-links';

/**
 * The referrer's upload link (issue 13), public: the token is the credential, no account.
 *
 * GET  → 200 { state: 'open', patientInitials, tooth, expiresAt, practiceName, maxFiles, maxBytes }
 *        (nothing else of the patient), 410 when used or expired, 404 for an unknown token.
 * POST multipart/form-data, one or more `file` fields → 201 { received, message }; 410 when the
 *        link was used (also by a submission a moment earlier) or has expired; 413/415/422 for a
 *        refused file (the link still works).
 * Both are rate-limited per client address (the socket's, unless TRUSTED_PROXIES: lib/auth/origin.ts).
 * The POST checks Origin and the body type like every write (lib/security/request-guard.ts).
 */
export const dynamic = 'force-dynamic';

type Ctx = { params: Promise<{ token: string }> };

export async function GET(req: Request, ctx: Ctx): Promise<Response> {
  try {
    const { token } = await ctx.params;
    const origin = originFrom(req.headers);
    await takeUploadRequest(redisReady, origin.ip);
    const view = await openUploadLink(await requestEm(), token, origin);
    if (view.state !== 'open') throw new LinkGoneError(view.message!);
    return json(view);
  } catch (e) {
    return errorResponse(e);
  }
}

const FRAMING_BYTES = 64 * 1024;

export async function POST(req: Request, ctx: Ctx): Promise<Response> {
  try {
    const refusal = crossSiteRefusal(req.method, req.headers, originOf(env.APP_URL)) ?? bodyTypeRefusal(req.method, req.headers, ['multipart/form-data']);
    if (refusal) return json({ error: refusal.error, message: refusal.message }, refusal.status);
    const { token } = await ctx.params;
    const origin = originFrom(req.headers);
    await takeUploadRequest(redisReady, origin.ip);
    if (!isWellFormedToken(token)) throw new NotFoundError('This upload link is not valid. Check that the whole link was copied, or ask the practice for a new one.');
    const max = filmMaxBytes();
    const tooLarge = () => new ServiceError(filmTooLargeMessage(max), 413, undefined, 'payload_too_large');
    if (Number(req.headers.get('content-length') ?? 0) > UPLOAD_MAX_FILES * max + FRAMING_BYTES) throw tooLarge();
    const form = await req.formData().catch(() => {
      throw new ValidationError('The upload could not be read: send the films as the form field “file” of a multipart form.');
    });
    const files = form.getAll('file').filter((f): f is File => typeof f !== 'string');
    if (files.some((f) => f.size > max)) throw tooLarge();
    const bytes = await Promise.all(files.map(async (f) => new Uint8Array(await f.arrayBuffer())));
    return json(await receiveReferrerUpload(await requestEm(), token, bytes, origin), 201);
  } catch (e) {
    return errorResponse(e);
  }
}

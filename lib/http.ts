import 'server-only';
import { NextResponse } from 'next/server';
import type { EntityManager } from '@mikro-orm/postgresql';
import { getRequestContext } from '@/lib/auth/session';
import { can, type Permission } from '@/lib/auth/permissions';
import type { Actor } from '@/lib/auth/actor';
import { RateLimitedError, ServiceError } from '@/lib/services/errors';
import { isServiceUnavailable, UnavailableError } from '@/lib/services/unavailable';
import { env } from '@/lib/env';
import { bodyTypeRefusal, crossSiteRefusal, originOf, type BodyType } from '@/lib/security/request-guard';
import { logger } from '@/lib/log/logger';
import { withRequestId } from '@/lib/log/context';
import { REQUEST_ID_HEADER, logPath, requestIdFrom, safeError } from '@/lib/log/request-id';

export interface HandlerContext<P> {
  req: Request;
  em: EntityManager;
  actor: Actor;
  params: P;
}

export interface HandlerOptions {
  /** Body types a write may send (default JSON only; the CSV import also takes multipart and CSV). */
  accept?: readonly BodyType[];
}

const JSON_ONLY: readonly BodyType[] = ['application/json'];

/**
 * Wraps a route handler: a write (POST, PUT, PATCH, DELETE) from anywhere but Lamina's own
 * pages is refused 403, and one with a body of another type than JSON (or `accept`) 415, before
 * the session is read; then 401 JSON when not signed in, 403 JSON when the permission is not
 * granted, typed service errors mapped to their status, anything unexpected logged and a 500
 * with a safe message. Every body's `error` is a stable code (lib/services/errors.ts).
 */
export function handler<P = Record<string, string>>(
  permission: Permission,
  fn: (ctx: HandlerContext<P>) => Promise<Response | unknown>,
  options: HandlerOptions = {},
) {
  return async (req: Request, ctx: { params: Promise<P> }): Promise<Response> => {
    const requestId = requestIdFrom(req.headers, behindProxy());
    const started = performance.now();
    const seen: { actor: Actor | null } = { actor: null };
    const response = await withRequestId(requestId, async () => {
      try {
        const refusal =
          crossSiteRefusal(req.method, req.headers, originOf(env.APP_URL)) ??
          bodyTypeRefusal(req.method, req.headers, options.accept ?? JSON_ONLY);
        if (refusal) return json({ error: refusal.error, message: refusal.message }, refusal.status);
        const { em, actor, mustChoosePractice } = await getRequestContext();
        if (!actor && mustChoosePractice) {
          return json({ error: 'practice_not_chosen', message: 'Choose the practice you are working in first.' }, 409);
        }
        if (!actor) return json({ error: 'not_signed_in', message: 'Sign in to continue.' }, 401);
        seen.actor = actor;
        if (!can(actor.roles, permission)) {
          return json({ error: 'forbidden', message: 'Your role does not allow this.' }, 403);
        }
        const result = await fn({ req, em, actor, params: await ctx.params });
        return result instanceof Response ? result : json(result, 200);
      } catch (e) {
        return errorResponse(e, requestId);
      }
    });
    // One line a request: ids, the path (long tokens cut out), status and time — never a body or a query.
    logger('web').info(
      { reqId: requestId, method: req.method, path: logPath(req.url), status: response.status, ms: Math.round(performance.now() - started), userId: seen.actor?.userId, practiceId: seen.actor?.practiceId },
      'request',
    );
    try {
      response.headers.set(REQUEST_ID_HEADER, requestId);
    } catch {
      // a redirect's headers are immutable: it goes without the id
    }
    return response;
  };
}

/** A proxy is configured (TRUSTED_PROXIES): only then is its X-Request-Id taken. */
function behindProxy(): boolean {
  const t = env.trustedProxies;
  return 'count' in t ? t.count > 0 : t.addresses.length > 0;
}

export function json(body: unknown, status = 200, init?: ResponseInit) {
  return NextResponse.json(body, { status, ...init, headers: { 'Cache-Control': 'no-store', ...init?.headers } });
}

export function errorResponse(e: unknown, requestId?: string): Response {
  if (e instanceof ServiceError) {
    const headers: Record<string, string> = {};
    if (e instanceof RateLimitedError || e instanceof UnavailableError) headers['Retry-After'] = String(e.retryAfterSeconds);
    return json({ error: e.code, message: e.message, fieldErrors: e.fieldErrors }, e.status, { headers });
  }
  // the database or Redis not answering: the request changed nothing and may be tried again
  if (isServiceUnavailable(e)) return errorResponse(new UnavailableError(), requestId);
  // The error's class, code and stack frames: a driver's message can quote a row's values.
  logger('web').error({ reqId: requestId, err: safeError(e) }, 'unexpected error');
  return json({ error: 'internal', message: 'Something went wrong on our side. Nothing was changed.' }, 500);
}

/** Reads a JSON body; a malformed body is a 422 like any other bad input. */
export async function readJson(req: Request): Promise<unknown> {
  try {
    return await req.json();
  } catch {
    throw new ServiceError('The request body is not valid JSON.', 422, undefined, 'validation');
  }
}

/**
 * A CSV file as a download (the body comes from lib/csv/write.ts, formulas already neutralised): the
 * whole text, or its chunks as they are written (`streamCsv`), sent as the client reads them. A
 * streamed body has its status sent already: a failure while it is written is logged (the error's
 * class and code, nothing of the rows) and cuts the download short, so the client sees an
 * incomplete transfer rather than a short file. A client that goes away stops the writing
 * (the chunks' `return()`: their source closes what it holds).
 */
export function csvDownload(body: string | AsyncIterable<string>, filename: string, headers: Record<string, string> = {}): Response {
  return new Response(typeof body === 'string' ? body : textStream(body), {
    headers: {
      'Content-Type': 'text/csv; charset=utf-8',
      'Content-Disposition': `attachment; filename="${filename}"`,
      'Cache-Control': 'no-store',
      'X-Content-Type-Options': 'nosniff',
      ...headers,
    },
  });
}

function textStream(chunks: AsyncIterable<string>): ReadableStream<Uint8Array> {
  const encoder = new TextEncoder();
  const it = chunks[Symbol.asyncIterator]();
  return new ReadableStream<Uint8Array>({
    async pull(controller) {
      try {
        const { value, done } = await it.next();
        if (done) controller.close();
        else controller.enqueue(encoder.encode(value));
      } catch (e) {
        logger('web').error({ err: safeError(e) }, 'download failed while streaming');
        controller.error(e);
      }
    },
    async cancel() {
      await it.return?.();
    },
  });
}

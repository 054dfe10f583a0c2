/**
 * A shared service that is not answering (PostgreSQL restarting or unreachable, Redis down) is
 * not a bug of the request: the edge answers 503 with a retry hint instead of a 500, and the
 * request changed nothing (its transaction was rolled back with the connection). Pure: it reads
 * the error's shape only, so the route wrapper (lib/http.ts) and the server actions share it.
 *
 * Recognised (checked on the error and its `cause` / `previous` chain):
 * - PostgreSQL SQLSTATE classes 08 (connection exception) and 57P01–57P03 (admin shutdown, crash
 *   shutdown, cannot connect now), from the PostgreSQL manual's Appendix A (error codes);
 * - Node's socket errors ECONNREFUSED, ECONNRESET, EPIPE, ETIMEDOUT, EHOSTUNREACH, ENOTFOUND;
 * - node-postgres' "Connection terminated" messages, its refusal of a client whose connection
 *   broke or was closed under it ("… is not queryable", met when the pool hands out a connection
 *   the server just ended), its connect timeouts ("timeout expired", "timeout exceeded when trying
 *   to connect"), and knex's pool "Timeout acquiring a connection" (the pool could not reach the
 *   server in time);
 * - ioredis' "Connection is closed", MaxRetriesPerRequestError and, with the offline queue off (the
 *   web's client, lib/redis.ts), "Stream isn't writeable and enableOfflineQueue options is false".
 */
import { ServiceError } from './errors';

/** Seconds a client is asked to wait before trying again (a fast PostgreSQL restart takes a few). */
export const RETRY_AFTER_SECONDS = 5;

export const UNAVAILABLE_MESSAGE = 'Lamina cannot reach its database or queue just now (it may be restarting). Nothing was saved. Try again in a few seconds.';

export class UnavailableError extends ServiceError {
  readonly retryAfterSeconds = RETRY_AFTER_SECONDS;
  constructor(message = UNAVAILABLE_MESSAGE) {
    super(message, 503, undefined, 'unavailable');
  }
}

const SOCKET_CODES = new Set(['ECONNREFUSED', 'ECONNRESET', 'EPIPE', 'ETIMEDOUT', 'EHOSTUNREACH', 'ENOTFOUND', 'EAI_AGAIN']);
const SQLSTATES = new Set(['57P01', '57P02', '57P03']);
const MESSAGES = [/connection terminated/i, /enableOfflineQueue options is false/i, /timeout acquiring a connection/i, /connection is closed/i, /terminating connection due to administrator command/i, /the database system is (starting up|shutting down)/i, /client has encountered a connection error/i, /client was closed and is not queryable/i, /^timeout expired$/, /timeout exceeded when trying to connect/i];

function isUnavailableOne(e: { code?: unknown; sqlState?: unknown; name?: unknown; message?: unknown }): boolean {
  for (const code of [e.code, e.sqlState]) {
    if (typeof code !== 'string') continue;
    if (SOCKET_CODES.has(code) || SQLSTATES.has(code) || /^08[0-9A-Z]{3}$/.test(code)) return true;
  }
  if (e.name === 'MaxRetriesPerRequestError') return true;
  return typeof e.message === 'string' && MESSAGES.some((m) => m.test(e.message as string));
}

/** True when `e` (or what it wraps) says a shared service could not be reached. */
export function isServiceUnavailable(e: unknown): boolean {
  const seen = new Set<unknown>();
  let cur: unknown = e;
  while (cur && typeof cur === 'object' && !seen.has(cur)) {
    seen.add(cur);
    if (isUnavailableOne(cur as Record<string, unknown>)) return true;
    const next = cur as { cause?: unknown; previous?: unknown; errors?: unknown };
    if (Array.isArray(next.errors) && next.errors.some((x) => isServiceUnavailable(x))) return true; // AggregateError (a refused IPv4 and IPv6)
    cur = next.cause ?? next.previous;
  }
  return false;
}

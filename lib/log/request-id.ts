import { randomUUID } from 'node:crypto';

/**
 * The request id carried from a web request into the jobs it queues and every log line of both.
 * Pure (no env): the caller says whether a proxy is configured (TRUSTED_PROXIES).
 */
export const REQUEST_ID_HEADER = 'x-request-id';

/** What a request id may be: what a job id may hold (lib/queue JobSafeId), at most 64. */
export const REQUEST_ID_PATTERN = /^[A-Za-z0-9_-]{1,64}$/;

/**
 * The proxy's X-Request-Id when a proxy is configured and the header is well-formed (anyone else
 * could write anything there: a client's own header is never trusted); otherwise a fresh one.
 */
export function requestIdFrom(headers: Pick<Headers, 'get'>, behindProxy: boolean): string {
  const given = behindProxy ? headers.get(REQUEST_ID_HEADER)?.trim() : undefined;
  return given && REQUEST_ID_PATTERN.test(given) ? given : randomUUID();
}

/**
 * E-mail addresses in free text (an SMTP refusal quotes the recipient; a driver error its
 * values) replaced by `[email]`: the last guard before a line is written.
 */
const EMAIL = /[A-Za-z0-9._%+'-]+@[A-Za-z0-9-]+(?:\.[A-Za-z0-9-]+)+/g;
export function scrubText(text: string): string {
  return text.replace(EMAIL, '[email]');
}

/** The fields never written, wherever they sit (one or two levels down): pino `redact` paths. */
export const REDACT_FIELDS = ['name', 'firstName', 'lastName', 'fullName', 'email', 'phone', 'note', 'notes', 'text', 'dateOfBirth', 'address'] as const;
export const REDACT_PATHS = [
  ...REDACT_FIELDS,
  ...REDACT_FIELDS.map((f) => `*.${f}`),
  ...REDACT_FIELDS.map((f) => `*.*.${f}`),
  'patient',
  '*.patient',
  'req.headers.cookie',
  'req.headers.authorization',
  'headers.cookie',
  'headers.authorization',
];

/**
 * An error as a log line may hold it: its class, code and stack frames — never its message when
 * it is not one of ours (a database driver's message can quote the values of the failing row), and
 * never `detail`, `parameters` or the SQL.
 */
export function safeError(e: unknown, ownMessage = false): { type: string; code?: string; message?: string; stack?: string } {
  if (!(e instanceof Error)) return { type: typeof e };
  const code = (e as { code?: unknown }).code;
  const frames = (e.stack ?? '').split('\n').filter((l) => /^\s+at /.test(l)).slice(0, 8).join('\n');
  return {
    type: e.constructor?.name ?? 'Error',
    ...(typeof code === 'string' ? { code } : {}),
    ...(ownMessage ? { message: scrubText(e.message) } : {}),
    ...(frames ? { stack: frames } : {}),
  };
}

/** A request's path as a log line may hold it: no query (a search may hold a name), long segments (tokens) cut. */
export function logPath(url: string): string {
  let path: string;
  try {
    path = new URL(url, 'http://x').pathname;
  } catch {
    return '(unparsable)';
  }
  return path
    .split('/')
    .map((seg) => (seg.length > 40 ? ':token' : seg))
    .join('/');
}

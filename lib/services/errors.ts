/**
 * Typed errors that services throw and the edge (route handlers, actions) maps to a status.
 * Each carries a stable `code` that API bodies send as `error`: class names do not survive the
 * production build's minifier (they came out as "t" or ""), so nothing may depend on them.
 */
export type ErrorCode =
  | 'bad_request'
  | 'not_signed_in'
  | 'forbidden'
  | 'not_found'
  | 'conflict'
  | 'gone'
  | 'payload_too_large'
  | 'unsupported_media_type'
  | 'validation'
  | 'rate_limited'
  | 'unavailable'
  | 'upstream'
  | 'gone';

/** The code of a plain ServiceError, from its status. */
const CODE_OF_STATUS: Record<number, ErrorCode> = {
  400: 'bad_request',
  401: 'not_signed_in',
  403: 'forbidden',
  404: 'not_found',
  409: 'conflict',
  410: 'gone',
  413: 'payload_too_large',
  415: 'unsupported_media_type',
  422: 'validation',
  429: 'rate_limited',
  502: 'upstream',
  503: 'unavailable',
};

export class ServiceError extends Error {
  readonly code: ErrorCode;
  constructor(
    message: string,
    readonly status: number,
    readonly fieldErrors?: Record<string, string[]>,
    code?: ErrorCode,
  ) {
    super(message);
    this.name = 'ServiceError';
    this.code = code ?? CODE_OF_STATUS[status] ?? (status >= 500 ? 'unavailable' : 'bad_request');
  }
}

export class NotSignedInError extends ServiceError {
  constructor(message = 'Sign in to continue.') {
    super(message, 401, undefined, 'not_signed_in');
  }
}

export class ForbiddenError extends ServiceError {
  constructor(message = 'Your role does not allow this.') {
    super(message, 403, undefined, 'forbidden');
  }
}

export class NotFoundError extends ServiceError {
  constructor(message = 'Not found.') {
    super(message, 404, undefined, 'not_found');
  }
}

export class ConflictError extends ServiceError {
  constructor(message: string) {
    super(message, 409, undefined, 'conflict');
  }
}

export class ValidationError extends ServiceError {
  constructor(message: string, fieldErrors?: Record<string, string[]>) {
    super(message, 422, fieldErrors, 'validation');
  }
}

export class RateLimitedError extends ServiceError {
  constructor(
    message: string,
    readonly retryAfterSeconds: number,
  ) {
    super(message, 429, undefined, 'rate_limited');
  }
}

/** Typed errors that services throw and the edge (route handlers, actions) maps to a status. */
export class ServiceError extends Error {
  constructor(
    message: string,
    readonly status: number,
    readonly fieldErrors?: Record<string, string[]>,
  ) {
    super(message);
    this.name = new.target.name;
  }
}

export class NotSignedInError extends ServiceError {
  constructor(message = 'Sign in to continue.') {
    super(message, 401);
  }
}

export class ForbiddenError extends ServiceError {
  constructor(message = 'Your role does not allow this.') {
    super(message, 403);
  }
}

export class NotFoundError extends ServiceError {
  constructor(message = 'Not found.') {
    super(message, 404);
  }
}

export class ConflictError extends ServiceError {
  constructor(message: string) {
    super(message, 409);
  }
}

export class ValidationError extends ServiceError {
  constructor(message: string, fieldErrors?: Record<string, string[]>) {
    super(message, 422, fieldErrors);
  }
}

export class RateLimitedError extends ServiceError {
  constructor(
    message: string,
    readonly retryAfterSeconds: number,
  ) {
    super(message, 429);
  }
}

/**
 * Errors that cross the boundary between lib/ and the routes. Query functions return `null` for
 * "not found" and throw these for everything a route must map to a status code.
 */
const HTTP_ERROR = Symbol.for("rimguard.http-error");

export class HttpError extends Error {
  /**
   * A brand that survives module duplication: Next bundles route handlers apart from the custom
   * server, so an error thrown by a server service is not `instanceof` the route's HttpError.
   */
  readonly [HTTP_ERROR] = true;
  constructor(
    readonly status: number,
    message: string,
    readonly details?: unknown,
  ) {
    super(message);
    this.name = new.target.name;
  }
}
/** 401: no valid session. */
export class UnauthenticatedError extends HttpError {
  constructor(message = "Sign in to continue.") {
    super(401, message);
  }
}
/** 403: signed in, but the role does not allow this. */
export class ForbiddenError extends HttpError {
  constructor(message = "Your role does not allow this action.") {
    super(403, message);
  }
}
/** 404: does not exist, or belongs to another tenant (never tell the two apart). */
export class NotFoundError extends HttpError {
  constructor(what = "Resource") {
    super(404, `${what} not found.`);
  }
}
/** 400: the request uses a field the API no longer takes (the message names it and where it went). */
export class BadRequestError extends HttpError {
  constructor(message: string, details?: unknown) {
    super(400, message, details);
  }
}
/** 422: the input failed validation; `details` lists the fields. */
export class ValidationError extends HttpError {
  constructor(message: string, details?: unknown) {
    super(422, message, details);
  }
}
/** 409: a legal request that conflicts with the current state (e.g. an illegal alarm transition). */
export class ConflictError extends HttpError {
  constructor(message: string, details?: unknown) {
    super(409, message, details);
  }
}
/** 429: too many attempts. */
export class TooManyRequestsError extends HttpError {
  constructor(
    message: string,
    readonly retryAfterSeconds: number,
  ) {
    super(429, message);
  }
}

/** True for an HttpError from any copy of this module (see the brand above). */
export function isHttpError(err: unknown): err is HttpError {
  return err instanceof HttpError || (typeof err === "object" && err !== null && (err as Record<symbol, unknown>)[HTTP_ERROR] === true);
}

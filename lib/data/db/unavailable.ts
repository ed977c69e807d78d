/**
 * Telling "the database cannot be reached" apart from every other database error. Only this case
 * may (a) be answered 503 "database unavailable" instead of 500 and (b) let an operator action be
 * authorised from the last-known membership (lib/auth/context-cache.ts); an answer from the
 * database — "no such membership" included — is never treated as an outage.
 *
 * Duck-typed on names and codes: Next bundles route handlers apart from the custom server, so an
 * error from another copy of Sequelize is not `instanceof` this one's classes.
 */
import { HttpError } from "@/lib/domain/errors";

/** Shown to people (pages, API answers, sign-in): says what works, never where the database is. */
export const DATABASE_UNAVAILABLE =
  "Database unavailable: Rimguard cannot reach its database right now. Live values and alarm acknowledgements and shelving keep working (they are recorded and written when it is back); configuration, history, reports and sign-in return when the database is back.";

/** Sequelize's connection-level error classes (Sequelize 6 names). */
const CONNECTION_ERROR_NAMES = new Set([
  "SequelizeConnectionError",
  "SequelizeConnectionRefusedError",
  "SequelizeHostNotFoundError",
  "SequelizeHostNotReachableError",
  "SequelizeConnectionTimedOutError",
  "SequelizeConnectionAcquireTimeoutError",
]);

/** Socket and MariaDB connector codes of a lost or refused connection. */
const CONNECTION_CODES = new Set([
  "ECONNREFUSED",
  "ECONNRESET",
  "ENOENT", // the UNIX socket is gone (private server stopped)
  "EPIPE",
  "ETIMEDOUT",
  "EHOSTUNREACH",
  "ENETUNREACH",
  "PROTOCOL_CONNECTION_LOST",
  "ER_SOCKET_UNEXPECTED_CLOSE",
  "ER_CONNECTION_ALREADY_CLOSED",
  "ER_GET_CONNECTION_TIMEOUT",
  "ER_CONNECTION_TIMEOUT",
  "ER_SOCKET_TIMEOUT",
  "ER_CLOSING_POOL",
  "ER_SERVER_SHUTDOWN",
  "ER_CONNECTION_KILLED",
]);
/** MariaDB server errnos: shutdown in progress, connection killed (at shutdown), gone away, lost. */
const CONNECTION_ERRNOS = new Set([1053, 1927, 2002, 2003, 2006, 2013]);

function matches(e: unknown): boolean {
  if (typeof e !== "object" || e === null) return false;
  const x = e as { name?: unknown; code?: unknown; errno?: unknown };
  if (typeof x.name === "string" && CONNECTION_ERROR_NAMES.has(x.name)) return true;
  if (typeof x.code === "string" && CONNECTION_CODES.has(x.code)) return true;
  return typeof x.errno === "number" && CONNECTION_ERRNOS.has(x.errno);
}

/** True when `err` (or the driver error it wraps) says the database could not be reached. */
export function isDatabaseUnavailable(err: unknown): boolean {
  if (matches(err)) return true;
  const x = err as { parent?: unknown; original?: unknown; cause?: unknown } | null;
  return typeof x === "object" && x !== null && (matches(x.parent) || matches(x.original) || matches(x.cause));
}

/** 503 with the message above (for code that wants to throw it itself). */
export class DatabaseUnavailableError extends HttpError {
  constructor() {
    super(503, DATABASE_UNAVAILABLE);
  }
}

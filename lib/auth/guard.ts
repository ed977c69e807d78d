/**
 * THE guard. Every route handler, server action and socket subscription asks it who is calling
 * and in which tenant; rights come from the database (memberships), never from the token alone.
 *
 * Route handlers and server actions:
 *
 *   export const POST = handle(async (req) => {
 *     const ctx = await requireContext("operator"); // 401 signed out, 403 role too low
 *     ...                                           // use ctx.tenantId in every query
 *   });
 *
 * Pages (server components): `const ctx = await getContextOrNull(); if (!ctx) redirect("/signin")`.
 * Socket layer: `await contextForSocket(userId, tenantId, sessionVersion)` (null = disconnect).
 */
import { ForbiddenError, UnauthenticatedError } from "@/lib/domain/errors";
import { roleAtLeast, type Role, type TenantContext } from "@/lib/domain/types";
import { cachedTenantContext } from "./context-cache";
import { decodeSessionToken, sessionCookieValue, type SessionClaims } from "./session-token";

/** The session claims of the current request (route handler, server action, server component). */
export async function getSessionClaims(): Promise<SessionClaims | null> {
  const { cookies } = await import("next/headers");
  const jar = await cookies();
  const map: Record<string, string> = {};
  for (const c of jar.getAll()) map[c.name] = c.value;
  return decodeSessionToken(sessionCookieValue(map));
}

/** The caller's tenant context, or null when signed out or no longer allowed. */
export async function getContextOrNull(): Promise<TenantContext | null> {
  const claims = await getSessionClaims();
  if (!claims) return null;
  return cachedTenantContext(claims.userId, claims.tenantId, claims.sessionVersion, claims.sessionId);
}

/**
 * The caller's tenant context; throws UnauthenticatedError (401) without a valid session or when
 * the membership/session was withdrawn, ForbiddenError (403) when the role is below `minRole`.
 */
export async function requireContext(minRole: Role = "viewer"): Promise<TenantContext> {
  const claims = await getSessionClaims();
  if (!claims) throw new UnauthenticatedError();
  const ctx = await cachedTenantContext(claims.userId, claims.tenantId, claims.sessionVersion, claims.sessionId);
  if (!ctx) throw new UnauthenticatedError("Your session has ended or your access was withdrawn. Sign in again.");
  if (!roleAtLeast(ctx.role, minRole)) {
    throw new ForbiddenError(`This needs the ${minRole} role or higher; you are ${ctx.role}.`);
  }
  return ctx;
}

/** For the socket layer: the user's context in the tenant, or null when access is gone. */
export async function contextForSocket(
  userId: number,
  tenantId: number,
  sessionVersion: number,
  sid?: string,
): Promise<TenantContext | null> {
  return cachedTenantContext(userId, tenantId, sessionVersion, sid);
}

/** Role check for code that already holds a context (e.g. a socket event handler). */
export function assertRole(ctx: TenantContext, minRole: Role): void {
  if (!roleAtLeast(ctx.role, minRole)) {
    throw new ForbiddenError(`This needs the ${minRole} role or higher; you are ${ctx.role}.`);
  }
}

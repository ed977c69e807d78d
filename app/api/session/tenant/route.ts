/**
 * POST /api/session/tenant { tenantId } — switch the session to another tenant of the user.
 * The membership is checked against the database; the session cookie is re-issued with the new
 * tenant, and the user's open sockets of this session are closed (they reconnect into the new
 * tenant's room).
 */
import { cookies } from "next/headers";
import { NextResponse } from "next/server";
import { encode, decode } from "next-auth/jwt";
import { z } from "zod";
import { getConfig } from "@/lib/config";
import { NotFoundError, UnauthenticatedError } from "@/lib/domain/errors";
import { handle, parseBody } from "@/lib/http";
import { sessionEvents } from "@/lib/data/server-context";
import { getSessionClaims } from "@/lib/auth/guard";
import { loadTenantContext } from "@/lib/data/auth";

const bodySchema = z.object({ tenantId: z.coerce.number().int().positive() });

export const POST = handle(async (req: Request) => {
  const claims = await getSessionClaims();
  if (!claims) throw new UnauthenticatedError();
  const { tenantId } = await parseBody(req, bodySchema);
  const target = await loadTenantContext(claims.userId, tenantId, claims.sessionVersion, claims.sessionId);
  if (!target) throw new NotFoundError("Tenant");

  const cfg = getConfig();
  const jar = await cookies();
  const secure = jar.has("__Secure-next-auth.session-token");
  const name = secure ? "__Secure-next-auth.session-token" : "next-auth.session-token";
  const current = await decode({ token: jar.get(name)?.value, secret: cfg.NEXTAUTH_SECRET });
  if (!current) throw new UnauthenticatedError();
  const token = await encode({
    token: { ...current, tid: tenantId },
    secret: cfg.NEXTAUTH_SECRET,
    maxAge: cfg.SESSION_MAX_AGE_S,
  });
  const res = NextResponse.json({
    tenantId: target.tenantId,
    tenantName: target.tenantName,
    role: target.role,
  });
  res.cookies.set(name, token, {
    httpOnly: true,
    sameSite: "lax",
    path: "/",
    secure,
    maxAge: cfg.SESSION_MAX_AGE_S,
  });
  sessionEvents().emit("session:moved", claims.sessionId);
  return res;
});

/**
 * Reading the next-auth session cookie without next-auth's request helpers, so the custom server
 * (Socket.IO handshake) and route handlers decode it the same way. next-auth's `getToken` on a raw
 * Node request reads `req.cookies` only (docs/architecture.md §11), hence our own cookie parsing.
 */
import { decode, type JWT } from "next-auth/jwt";
import { getConfig } from "@/lib/config";
import { isSessionRevoked } from "@/lib/data/server-context";

export interface SessionClaims {
  userId: number;
  tenantId: number;
  sessionVersion: number;
  sessionId: string;
  /** Epoch ms when the token expires. */
  expiresAt: number;
  name: string;
  email: string;
}

const BASE = "next-auth.session-token";

/** The cookie names next-auth 4 uses (secure prefix on https), including split chunks. */
export function sessionCookieValue(cookies: Record<string, string | undefined>): string | null {
  for (const name of [`__Secure-${BASE}`, BASE]) {
    const whole = cookies[name];
    if (whole) return whole;
    const chunks: string[] = [];
    for (let i = 0; ; i++) {
      const c = cookies[`${name}.${i}`];
      if (c === undefined) break;
      chunks.push(c);
    }
    if (chunks.length) return chunks.join("");
  }
  return null;
}

/** Parse a Cookie header (RFC 6265 §4.2: `name=value` pairs separated by "; "). */
export function parseCookies(header: string | undefined | null): Record<string, string | undefined> {
  const out: Record<string, string | undefined> = {};
  if (!header) return out;
  for (const part of header.split(";")) {
    const eq = part.indexOf("=");
    if (eq < 0) continue;
    const name = part.slice(0, eq).trim();
    let value = part.slice(eq + 1).trim();
    if (value.startsWith('"') && value.endsWith('"')) value = value.slice(1, -1);
    if (!name || name in out) continue;
    try {
      out[name] = decodeURIComponent(value);
    } catch {
      out[name] = value;
    }
  }
  return out;
}

function claimsOf(token: JWT | null): SessionClaims | null {
  if (!token) return null;
  const { uid, tid, sv, sid, exp } = token;
  if (typeof uid !== "number" || typeof tid !== "number" || typeof sv !== "number") return null;
  if (typeof sid !== "string" || typeof exp !== "number") return null;
  if (exp * 1000 <= Date.now()) return null;
  if (isSessionRevoked(sid)) return null;
  return {
    userId: uid,
    tenantId: tid,
    sessionVersion: sv,
    sessionId: sid,
    expiresAt: exp * 1000,
    name: token.name ?? "",
    email: token.email ?? "",
  };
}

/** Decode and check a session token (signature/encryption, expiry, revocation); null if not valid. */
export async function decodeSessionToken(value: string | null | undefined): Promise<SessionClaims | null> {
  if (!value) return null;
  try {
    return claimsOf(await decode({ token: value, secret: getConfig().NEXTAUTH_SECRET }));
  } catch {
    return null;
  }
}

export async function claimsFromCookieHeader(header: string | undefined | null): Promise<SessionClaims | null> {
  return decodeSessionToken(sessionCookieValue(parseCookies(header)));
}

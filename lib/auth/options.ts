/**
 * next-auth 4 configuration: e-mail + password against users.password_hash (bcrypt), JWT sessions
 * that carry the user id, the current tenant, the user's session version and a session id of our
 * own. Rights are never trusted from the token: lib/auth/guard.ts re-reads the membership from the
 * database on each request (cached a few seconds).
 */
import { randomUUID } from "node:crypto";
import bcrypt from "bcryptjs";
import type { NextAuthOptions, User } from "next-auth";
import CredentialsProvider from "next-auth/providers/credentials";
import { z } from "zod";
import { getConfig } from "@/lib/config";
import { isDatabaseUnavailable } from "@/lib/data/db/unavailable";
import { TooManyRequestsError } from "@/lib/domain/errors";
import { revokeSession } from "@/lib/data/server-context";
import { findUserByEmail, listMemberships, recordRevokedSession, touchSignIn } from "@/lib/data/auth";
import { assertSignInAllowed, recordSignInFailure, recordSignInSuccess } from "./throttle";

/** Header set by server/index.ts from the TCP peer address (any client-sent value is dropped). */
export const CLIENT_IP_HEADER = "x-rimguard-client-ip";

export const SIGNIN_FAILED = "The e-mail or password is not right.";
export const NO_MEMBERSHIP = "This account has no access to any tenant yet. Ask an administrator.";
export const SIGNIN_DATABASE_UNAVAILABLE =
  "Signing in is not possible right now: the database is unavailable. If you are already signed in elsewhere, that session can still see and acknowledge alarms.";
export const SIGNIN_SERVER_ERROR = "Signing in failed because of a server error. Try again in a moment.";

const credentialsSchema = z.object({
  email: z.string().trim().toLowerCase().email().max(254),
  password: z.string().min(1).max(200),
});

/** A hash to compare against when the e-mail is unknown, so timing does not reveal accounts. */
const DUMMY_HASH = "$2b$10$CwTycUXWue0Thq9StjUM0uJ8DPLKXt1FYlwYpQW1G5/3kFjaOeK4a";

export interface AuthorizedUser extends User {
  id: string;
  sessionVersion: number;
  tenantId: number;
}

function headerValue(headers: unknown, name: string): string | undefined {
  if (!headers || typeof headers !== "object") return undefined;
  const v = (headers as Record<string, unknown>)[name];
  if (typeof v === "string") return v;
  if (Array.isArray(v) && typeof v[0] === "string") return v[0];
  return undefined;
}

export async function authorizeCredentials(
  raw: Record<string, unknown> | undefined,
  clientIp: string,
): Promise<AuthorizedUser | null> {
  const parsed = credentialsSchema.safeParse(raw ?? {});
  if (!parsed.success) return null;
  const { email, password } = parsed.data;
  await assertSignInAllowed(email, clientIp);
  const user = await findUserByEmail(email);
  const ok = await bcrypt.compare(password, user?.passwordHash ?? DUMMY_HASH);
  if (!user || !user.passwordHash || !ok || user.disabled) {
    await recordSignInFailure(email, clientIp);
    return null;
  }
  const memberships = await listMemberships(user.id);
  const first = memberships[0];
  if (!first) throw new Error(NO_MEMBERSHIP);
  await recordSignInSuccess(email, clientIp);
  await touchSignIn(user.id).catch(() => undefined);
  return {
    id: String(user.id),
    name: user.name,
    email: user.email,
    sessionVersion: user.sessionVersion,
    tenantId: first.tenantId,
  };
}

let cached: NextAuthOptions | null = null;

export function getAuthOptions(): NextAuthOptions {
  if (cached) return cached;
  const cfg = getConfig();
  cached = {
    secret: cfg.NEXTAUTH_SECRET,
    session: { strategy: "jwt", maxAge: cfg.SESSION_MAX_AGE_S },
    jwt: { maxAge: cfg.SESSION_MAX_AGE_S },
    pages: { signIn: "/signin", error: "/signin" },
    providers: [
      CredentialsProvider({
        id: "credentials",
        name: "E-mail and password",
        credentials: {
          email: { label: "E-mail", type: "email" },
          password: { label: "Password", type: "password" },
        },
        async authorize(credentials, req) {
          const ip = headerValue(req?.headers, CLIENT_IP_HEADER) ?? "unknown";
          try {
            return await authorizeCredentials(credentials, ip);
          } catch (err) {
            // next-auth shows a thrown error's message on the sign-in page (?error=...): only our
            // own words go there, never a driver's (which names the database host and port).
            if (err instanceof TooManyRequestsError) throw new Error(err.message);
            if (err instanceof Error && err.message === NO_MEMBERSHIP) throw err;
            if (isDatabaseUnavailable(err)) throw new Error(SIGNIN_DATABASE_UNAVAILABLE);
            console.error("[auth] sign-in failed", err);
            throw new Error(SIGNIN_SERVER_ERROR);
          }
        },
      }),
    ],
    callbacks: {
      async jwt({ token, user }) {
        if (user) {
          const u = user as AuthorizedUser;
          token.uid = Number(u.id);
          token.tid = u.tenantId;
          token.sv = u.sessionVersion;
          token.sid = randomUUID();
        }
        // A client-sent update() is ignored on purpose: the tenant changes only through
        // POST /api/session/tenant, which checks the membership first.
        return token;
      },
      async session({ session, token }) {
        session.user = {
          id: Number(token.uid),
          name: token.name ?? "",
          email: token.email ?? "",
        };
        session.tenantId = Number(token.tid);
        return session;
      },
      async redirect({ url, baseUrl }) {
        if (url.startsWith("/")) return `${baseUrl}${url}`;
        if (new URL(url).origin === baseUrl) return url;
        return baseUrl;
      },
    },
    events: {
      async signOut({ token }) {
        if (!token?.sid || typeof token.exp !== "number") return;
        revokeSession(String(token.sid), token.exp * 1000);
        // Kept in MariaDB too, so a restart does not accept the signed-out cookie again.
        await recordRevokedSession(String(token.sid), typeof token.uid === "number" ? token.uid : null, token.exp * 1000).catch((err: unknown) =>
          console.error("[auth] could not store a sign-out", err),
        );
      },
    },
  };
  return cached;
}

/** Forget the built options (tests that change the configuration). */
export function resetAuthOptions(): void {
  cached = null;
}

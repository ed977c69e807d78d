/**
 * Sessions and pages after issue 9 (items 5 and 10): a signed-out cookie stays refused after a
 * restart (the revocation is in MariaDB, not only in memory); a demoted or removed user's open
 * socket is closed within 1 s; another tenant's loop page is a 404 like a missing one; every answer
 * carries the security headers, and the CSP nonce is on every script the page renders.
 */
import bcrypt from "bcryptjs";
import { QueryTypes } from "sequelize";
import { io as connect, type Socket } from "socket.io-client";
import { afterEach, beforeAll, describe, expect, it } from "vitest";
import type { ClientToServerEvents, ServerToClientEvents } from "@/lib/domain/events";
import { notifyUserChanged } from "@/lib/data/server-context";
import { setUpServerSuite } from "../helpers/server-suite";
import { FIXTURE_PASSWORD } from "./fixture";
import { authedFetch, sessionOf, signIn, type CookieJar } from "./helpers";

type ClientSocket = Socket<ServerToClientEvents, ClientToServerEvents>;

const suite = setUpServerSuite({ seed: false });
let admin: CookieJar;
const open: ClientSocket[] = [];

beforeAll(async () => {
  admin = (await signIn(suite.srv.url, suite.fx.a.users.admin.email, FIXTURE_PASSWORD)).jar;
});
afterEach(() => {
  for (const s of open.splice(0)) s.disconnect();
});

const sessionFor = (email: string): Promise<CookieJar> => sessionOf(suite.srv.url, email);

function socketWith(cookie: string): Promise<{ socket: ClientSocket; connected: boolean }> {
  const socket: ClientSocket = connect(suite.srv.url, { transports: ["websocket"], extraHeaders: { origin: suite.srv.url, cookie }, reconnection: false, forceNew: true, timeout: 5_000 });
  open.push(socket);
  return new Promise((resolve) => {
    socket.once("connect", () => resolve({ socket, connected: true }));
    socket.once("connect_error", () => resolve({ socket, connected: false }));
  });
}

/** Resolves with the ms from `start` until the socket is told its session ended (rejects after `ms`). */
function endedWithin(s: ClientSocket, start: () => number, ms: number): Promise<number> {
  return new Promise((resolve, reject) => {
    const t = setTimeout(() => reject(new Error(`socket still open ${ms} ms after the change`)), ms);
    s.once("session:ended", () => {
      clearTimeout(t);
      resolve(performance.now() - start());
    });
  });
}

describe("sign-out survives a restart", () => {
  it("a signed-out cookie is refused after the in-memory state is gone", async () => {
    const jar = await sessionFor(suite.fx.a.users.viewer.email);
    const old = jar.header();
    expect((await authedFetch(suite.srv.url, jar, "/api/session")).status).toBe(200);
    const csrf = (await (await authedFetch(suite.srv.url, jar, "/api/auth/csrf")).json()) as { csrfToken: string };
    const out = await authedFetch(suite.srv.url, jar, "/api/auth/signout", {
      method: "POST",
      headers: { "content-type": "application/x-www-form-urlencoded" },
      body: new URLSearchParams({ csrfToken: csrf.csrfToken, json: "true" }),
    });
    expect(out.status).toBeLessThan(400);
    expect((await fetch(`${suite.srv.url}/api/session`, { headers: { cookie: old } })).status).toBe(401);
    const rows = await suite.srv.db.sequelize.query<{ n: number }>("SELECT COUNT(*) AS n FROM session_revocations WHERE user_id = ?", {
      replacements: [suite.fx.a.users.viewer.id],
      type: QueryTypes.SELECT,
    });
    expect(Number(rows[0]!.n)).toBe(1);

    // A restart: the process-wide list of signed-out sessions and the guard's cache start empty.
    (globalThis as { __rimguard?: { revokedSessions: Map<string, number> } }).__rimguard!.revokedSessions.clear();
    notifyUserChanged(suite.fx.a.users.viewer.id);
    expect((await fetch(`${suite.srv.url}/api/session`, { headers: { cookie: old } })).status).toBe(401);
    expect((await socketWith(old)).connected).toBe(false);
    // Another session of the same user is not affected.
    expect((await authedFetch(suite.srv.url, await sessionFor(suite.fx.a.users.viewer.email), "/api/session")).status).toBe(200);
  });
});

describe("rights withdrawn from an open socket", () => {
  async function tempMember(email: string) {
    const m = suite.srv.db.models;
    const user = await m.User.create({ email, name: "Temp Hand", passwordHash: await bcrypt.hash(FIXTURE_PASSWORD, 4) });
    const membership = await m.Membership.create({ userId: user.id, tenantId: suite.fx.a.id, role: "operator" });
    return { user, membership };
  }

  /**
   * A temporary operator with an open socket; the returned call changes the membership through
   * the admin API and resolves with the answer's status once the socket has ended (within 1 s).
   */
  async function connectedMember(email: string) {
    const { membership } = await tempMember(email);
    const { socket, connected } = await socketWith((await sessionFor(email)).header());
    expect(connected).toBe(true);
    return async (method: "PATCH" | "DELETE", body: Record<string, string>): Promise<number> => {
      let t0 = 0;
      const ended = endedWithin(socket, () => t0, 1_000);
      t0 = performance.now();
      const res = await authedFetch(suite.srv.url, admin, `/api/admin/users/${membership.id}`, {
        method,
        headers: { "content-type": "application/json" },
        body: JSON.stringify(body),
      });
      await ended;
      return res.status;
    };
  }

  it("a demotion through the admin API closes the user's socket within 1 s", async () => {
    const withdraw = await connectedMember("demoted@brackwater.example");
    expect(await withdraw("PATCH", { role: "viewer", reason: "moved to the planning desk" })).toBe(200);
    // It may reconnect, now as a viewer.
    const again = await socketWith((await sessionFor("demoted@brackwater.example")).header());
    expect(again.connected).toBe(true);
  });

  it("a removal through the admin API closes the user's socket within 1 s", async () => {
    const withdraw = await connectedMember("removed@brackwater.example");
    expect(await withdraw("DELETE", { reason: "left the site" })).toBe(204);
  });
});

describe("loop pages", () => {
  it("another tenant's loop page answers 404 like a loop that does not exist; the own loop renders", async () => {
    const other = await authedFetch(suite.srv.url, admin, `/loops/${suite.fx.b.loopId}`);
    const missing = await authedFetch(suite.srv.url, admin, `/loops/999999`);
    const own = await authedFetch(suite.srv.url, admin, `/loops/${suite.fx.a.loopId}`);
    expect(other.status).toBe(404);
    expect(missing.status).toBe(404);
    expect(own.status).toBe(200);
  });
});

describe("security headers", () => {
  it("every answer carries them; the CSP forbids framing and admits only scripts with this response's nonce", async () => {
    for (const path of ["/signin", "/api/session", "/api/health"]) {
      const res = await fetch(`${suite.srv.url}${path}`);
      expect(res.headers.get("x-content-type-options"), path).toBe("nosniff");
      expect(res.headers.get("referrer-policy"), path).toBe("same-origin");
      const csp = res.headers.get("content-security-policy") ?? "";
      expect(csp, path).toContain("frame-ancestors 'none'");
      expect(csp, path).toContain("object-src 'none'");
      expect(csp, path).not.toMatch(/script-src[^;]*'unsafe-inline'/);
    }
    const a = await fetch(`${suite.srv.url}/signin`);
    const b = await fetch(`${suite.srv.url}/signin`);
    const nonceOf = (r: Response) => /'nonce-([^']+)'/.exec(r.headers.get("content-security-policy") ?? "")?.[1];
    const nonce = nonceOf(a);
    expect(nonce).toBeTruthy();
    expect(nonceOf(b)).not.toBe(nonce);
    const html = await a.text();
    const scripts = html.match(/<script\b[^>]*>/g) ?? [];
    expect(scripts.length).toBeGreaterThan(0);
    for (const tag of scripts) expect(tag).toContain(`nonce="${nonce}"`);
  });
});

/**
 * The Socket.IO handshake (docs/architecture.md §8): refused without a session, with a forged one, or
 * from a foreign Origin; accepted with a valid session from the console's origin, in its tenant's
 * room only; closed (after `session:ended`) when the membership is revoked, the user signs out,
 * or the session switches tenant.
 */
import bcrypt from "bcryptjs";
import { io as connect, type Socket } from "socket.io-client";
import { afterEach, describe, expect, it } from "vitest";
import { tenantRoom, type ClientToServerEvents, type ServerToClientEvents } from "@/lib/domain/events";
import { notifyUserChanged } from "@/lib/data/server-context";
import { setUpServerSuite } from "../helpers/server-suite";
import { FIXTURE_PASSWORD } from "./fixture";
import { authedFetch, sessionOf, type CookieJar } from "./helpers";

type ClientSocket = Socket<ServerToClientEvents, ClientToServerEvents>;

const suite = setUpServerSuite({ seed: false });
const open: ClientSocket[] = [];

afterEach(() => {
  for (const s of open.splice(0)) s.disconnect();
});

function socketFor(headers: Record<string, string>, transport: "websocket" | "polling" = "websocket"): ClientSocket {
  const s: ClientSocket = connect(suite.srv.url, {
    transports: [transport],
    extraHeaders: headers,
    reconnection: false,
    forceNew: true,
    timeout: 5_000,
  });
  open.push(s);
  return s;
}

function outcome(s: ClientSocket): Promise<{ connected: boolean; error?: string }> {
  return new Promise((resolve) => {
    s.once("connect", () => resolve({ connected: true }));
    s.once("connect_error", (err) => resolve({ connected: false, error: err.message }));
  });
}

async function roomsOf(socketId: string): Promise<string[]> {
  const sockets = await suite.srv.server.ctx.io!.fetchSockets();
  return [...(sockets.find((s) => s.id === socketId)?.rooms ?? [])];
}

const sessionFor = (email: string): Promise<CookieJar> => sessionOf(suite.srv.url, email);

describe("Socket.IO handshake", () => {
  it("refuses a connection without a session", async () => {
    const r = await outcome(socketFor({ origin: suite.srv.url }));
    expect(r).toEqual({ connected: false, error: "unauthenticated" });
  });

  it("refuses a forged session cookie", async () => {
    const r = await outcome(socketFor({ origin: suite.srv.url, cookie: "next-auth.session-token=forged.token.value" }));
    expect(r).toEqual({ connected: false, error: "unauthenticated" });
  });

  it("refuses a session cookie signed with another secret", async () => {
    const { encode } = await import("next-auth/jwt");
    const token = await encode({
      token: { uid: suite.fx.a.users.admin.id, tid: suite.fx.a.id, sv: 0, sid: "x" },
      secret: "some-other-secret-of-enough-length",
    });
    const r = await outcome(socketFor({ origin: suite.srv.url, cookie: `next-auth.session-token=${token}` }));
    expect(r.connected).toBe(false);
  });

  it("refuses a valid session from a foreign Origin, over WebSocket and over polling", async () => {
    const jar = await sessionFor(suite.fx.a.users.viewer.email);
    const ws = await outcome(socketFor({ origin: "http://evil.example", cookie: jar.header() }));
    expect(ws.connected).toBe(false);
    const polling = await outcome(socketFor({ origin: "http://evil.example", cookie: jar.header() }, "polling"));
    expect(polling.connected).toBe(false);
  });

  it("accepts a valid session from the console's origin and joins only its tenant's room", async () => {
    const jar = await sessionFor(suite.fx.a.users.viewer.email);
    const s = socketFor({ origin: suite.srv.url, cookie: jar.header() });
    expect(await outcome(s)).toEqual({ connected: true });
    const rooms = await roomsOf(s.id!);
    expect(rooms).toContain(tenantRoom(suite.fx.a.id));
    expect(rooms).not.toContain(tenantRoom(suite.fx.b.id));

    const health = (await (await fetch(`${suite.srv.url}/api/health`)).json()) as { realtime: { clients: number } };
    expect(health.realtime.clients).toBeGreaterThanOrEqual(1);
  });

  it("a tenant's broadcast reaches its sockets and not another tenant's", async () => {
    const [ja, jb] = [await sessionFor(suite.fx.a.users.operator.email), await sessionFor(suite.fx.b.users.operator.email)];
    const sa = socketFor({ origin: suite.srv.url, cookie: ja.header() });
    const sb = socketFor({ origin: suite.srv.url, cookie: jb.header() });
    expect(await Promise.all([outcome(sa), outcome(sb)])).toEqual([{ connected: true }, { connected: true }]);
    const gotA = new Promise<number>((resolve) => sa.once("loop:state", (batch) => resolve(batch.length)));
    let bReceived = false;
    sb.on("loop:state", () => {
      bReceived = true;
    });
    suite.srv.server.ctx.io!.to(tenantRoom(suite.fx.a.id)).emit("loop:state", []);
    expect(await gotA).toBe(0);
    await new Promise((r) => setTimeout(r, 200));
    expect(bReceived).toBe(false);
  });
});

describe("withdrawn sessions close their sockets", () => {
  function ended(s: ClientSocket): Promise<{ reason: string; disconnected: boolean }> {
    return new Promise((resolve) => {
      s.once("session:ended", (reason) => {
        s.once("disconnect", () => resolve({ reason, disconnected: true }));
      });
    });
  }

  it("a revoked membership: session:ended, then disconnected; the API refuses too", async () => {
    const m = suite.srv.db.models;
    const email = "socket-temp@quillon.example";
    const user = await m.User.create({ email, name: "Socket Temp", passwordHash: await bcrypt.hash(FIXTURE_PASSWORD, 4) });
    const membership = await m.Membership.create({ userId: user.id, tenantId: suite.fx.b.id, role: "operator" });
    const jar = await sessionFor(email);
    const s = socketFor({ origin: suite.srv.url, cookie: jar.header() });
    expect((await outcome(s)).connected).toBe(true);
    const done = ended(s);
    await membership.destroy();
    notifyUserChanged(user.id);
    const r = await done;
    expect(r.disconnected).toBe(true);
    expect(r.reason).toMatch(/withdrawn/);
    expect([401, 403]).toContain((await authedFetch(suite.srv.url, jar, "/api/session")).status);
    // And it cannot come back.
    expect((await outcome(socketFor({ origin: suite.srv.url, cookie: jar.header() }))).connected).toBe(false);
  });

  it("a revoked membership is noticed by the periodic re-check even without an announcement", async () => {
    const m = suite.srv.db.models;
    const email = "socket-quiet@quillon.example";
    const user = await m.User.create({ email, name: "Socket Quiet", passwordHash: await bcrypt.hash(FIXTURE_PASSWORD, 4) });
    const membership = await m.Membership.create({ userId: user.id, tenantId: suite.fx.b.id, role: "viewer" });
    const s = socketFor({ origin: suite.srv.url, cookie: (await sessionFor(email)).header() });
    expect((await outcome(s)).connected).toBe(true);
    const done = ended(s);
    await membership.destroy();
    const r = await done; // SOCKET_RECHECK_MS = 5 s
    expect(r.disconnected).toBe(true);
  }, 20_000);

  it("signing out closes that session's sockets", async () => {
    const jar = await sessionFor(suite.fx.a.users.engineer.email);
    const s = socketFor({ origin: suite.srv.url, cookie: jar.header() });
    expect((await outcome(s)).connected).toBe(true);
    const done = ended(s);
    const csrf = (await (await authedFetch(suite.srv.url, jar, "/api/auth/csrf")).json()) as { csrfToken: string };
    await authedFetch(suite.srv.url, jar, "/api/auth/signout", {
      method: "POST",
      headers: { "content-type": "application/x-www-form-urlencoded" },
      body: new URLSearchParams({ csrfToken: csrf.csrfToken, json: "true" }),
    });
    expect((await done).reason).toMatch(/Signed out/);
  });

  it("switching tenant closes the old socket; a new one joins the new tenant's room", async () => {
    const jar = await sessionFor(suite.fx.both.email);
    const s = socketFor({ origin: suite.srv.url, cookie: jar.header() });
    expect((await outcome(s)).connected).toBe(true);
    const before = await roomsOf(s.id!);
    const from = before.includes(tenantRoom(suite.fx.a.id)) ? suite.fx.a : suite.fx.b;
    const to = from === suite.fx.a ? suite.fx.b : suite.fx.a;
    const done = ended(s);
    const sw = await authedFetch(suite.srv.url, jar, "/api/session/tenant", {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ tenantId: to.id }),
    });
    expect(sw.status).toBe(200);
    jar.absorb(sw);
    expect((await done).disconnected).toBe(true);
    const again = socketFor({ origin: suite.srv.url, cookie: jar.header() });
    expect((await outcome(again)).connected).toBe(true);
    const rooms = await roomsOf(again.id!);
    expect(rooms).toContain(tenantRoom(to.id));
    expect(rooms).not.toContain(tenantRoom(from.id));
  });
});

/**
 * A database outage seen through the real server (production build): the server reaches MariaDB
 * through a TCP proxy in this test, which is then cut off (connections dropped, new ones refused)
 * and restored. Pages answer 503 with a plain "database unavailable" page, except the alarm list,
 * which opens from the last-known membership with the outage said at the top; APIs answer 503;
 * an operator acknowledges after the 3 s role cache has expired; sign-in and health say the
 * database is unavailable without naming its address; the acknowledgement reaches MariaDB when it
 * is back, recorded as authorised from the last-known membership.
 */
import net from "node:net";
import { QueryTypes } from "sequelize";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { createAuthFixture, FIXTURE_PASSWORD, type AuthFixture } from "../auth/fixture";
import { authedFetch, signIn, type CookieJar } from "../auth/helpers";
import { startTestServer, type TestServer } from "../setup/server";
import { loopState, polesWithDecay, setTenantPolicy } from "./helpers";

/** A TCP proxy to the database that can be cut off and restored. */
function dbProxy() {
  let target = 0;
  let server: net.Server | null = null;
  let port = 0;
  const sockets = new Set<net.Socket>();
  const listen = () =>
    new Promise<void>((resolve) => {
      if (server) return resolve();
      server = net.createServer((client) => {
        const upstream = net.connect(target, "127.0.0.1");
        for (const s of [client, upstream]) {
          sockets.add(s);
          s.on("close", () => sockets.delete(s));
          s.on("error", () => s.destroy());
        }
        client.pipe(upstream).pipe(client);
      });
      server.listen(port, "127.0.0.1", () => {
        port = (server!.address() as net.AddressInfo).port;
        resolve();
      });
    });
  return {
    async start(databasePort: number) {
      target = databasePort;
      await listen();
      return port;
    },
    async cut() {
      await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
      server = null;
      for (const s of sockets) s.destroy();
    },
    restore: listen,
    get port() {
      return port;
    },
  };
}

const proxy = dbProxy();
let srv: TestServer;
let fx: AuthFixture;
const jars: Record<"operator" | "viewer", CookieJar> = {} as never;
const ADDRESS = () => new RegExp(`127\\.0\\.0\\.1|localhost|:${proxy.port}\\b|ECONNREFUSED|ECONNRESET|ENOENT`);

beforeAll(async () => {
  srv = await startTestServer({ seed: false, dbPort: (p) => proxy.start(p) });
  fx = await createAuthFixture(srv.db.models);
  await setTenantPolicy(srv.db.sequelize, fx.a.id, { onDelayS: 0, offDelayS: 0, advisoryOnDelayS: 0 });
  srv.server.ctx.bus.emit("policy:changed", fx.a.id);
  for (const role of ["operator", "viewer"] as const) {
    const r = await signIn(srv.url, fx.a.users[role].email, FIXTURE_PASSWORD);
    if (!r.session) throw new Error(`fixture sign-in failed: ${r.error}`);
    jars[role] = r.jar;
  }
}, 240_000);
afterAll(async () => {
  await proxy.restore().catch(() => undefined);
  await srv?.stop();
  await proxy.cut();
});

describe("database outage through the server", () => {
  it("503 pages and APIs without addresses; the alarm list and acknowledgements keep working", async () => {
    const get = (jar: CookieJar | null, path: string) => authedFetch(srv.url, jar, path);
    // An active alarm, and the operator's membership read once (the console was open). The loop
    // was made after the server started: its alarm points come with a configuration change.
    srv.server.ctx.bus.emit("loop:config-changed", fx.a.loopId);
    await new Promise((r) => setTimeout(r, 1_000));
    for (let i = 0; i < 3; i++) srv.server.ctx.bus.emit("tracker:update", { ...loopState(fx.a.loopId, fx.a.id, Date.now(), polesWithDecay(0.6)), estimationPeriodS: 0.5 });
    const list = (await (await get(jars.operator, "/api/alarms")).json()) as { alarms: { id: number; loopId: number; condition: string; state: string }[] };
    const margin = list.alarms.find((a) => a.loopId === fx.a.loopId && a.condition === "margin")!;
    expect(margin.state).toBe("unacknowledged");
    expect((await get(jars.operator, "/alarms")).status).toBe(200);

    await proxy.cut();
    await new Promise((r) => setTimeout(r, 3_300)); // past the role cache

    const page = await get(jars.operator, "/loops");
    expect(page.status).toBe(503);
    const pageText = await page.text();
    expect(pageText).toMatch(/Database unavailable/);
    expect(pageText).not.toMatch(ADDRESS());

    const api = await get(jars.operator, "/api/loops");
    expect(api.status).toBe(503);
    const apiText = await api.text();
    expect(apiText).toMatch(/Database unavailable/);
    expect(apiText).not.toMatch(ADDRESS());

    const alarmsPage = await get(jars.operator, "/alarms");
    expect(alarmsPage.status).toBe(200);
    expect(await alarmsPage.text()).toMatch(/Database unavailable/);

    const ack = await authedFetch(srv.url, jars.operator, `/api/alarms/${margin.id}/acknowledge`, {
      method: "POST",
      headers: { "content-type": "application/json", origin: srv.url, "sec-fetch-site": "same-origin" },
      body: JSON.stringify({ comment: "seen on the board while the database was away" }),
    });
    expect(ack.status).toBe(200);

    const signInAttempt = await signIn(srv.url, fx.a.users.engineer.email, FIXTURE_PASSWORD);
    expect(signInAttempt.session).toBeNull();
    expect(signInAttempt.error).toMatch(/database is unavailable/);
    expect(signInAttempt.error).not.toMatch(ADDRESS());

    // Health is public: its error fields (the alarm writer's last database error included) keep no address.
    const health = (await (await get(null, "/api/health")).json()) as Record<string, unknown>;
    expect(health.database).toMatchObject({ status: "critical", error: "database unreachable" });
    const errors: string[] = [];
    const collect = (v: unknown, k: string): void => {
      if (typeof v === "string" && /error/i.test(k)) errors.push(v);
      else if (v && typeof v === "object") for (const [kk, vv] of Object.entries(v)) collect(vv, kk);
    };
    collect(health, "");
    expect(errors.length).toBeGreaterThan(1);
    for (const e of errors) expect(e).not.toMatch(new RegExp(`127\\.0\\.0\\.1|localhost|:${proxy.port}\\b|\\.sock`));

    await proxy.restore();
    const deadline = Date.now() + 30_000;
    let rows: { data: string | Record<string, unknown> }[] = [];
    while (Date.now() < deadline) {
      rows = (await srv.db.sequelize.query("SELECT data FROM alarm_events WHERE alarm_id = ? AND kind = 'acknowledge'", {
        replacements: [margin.id],
        type: QueryTypes.SELECT,
      })) as typeof rows;
      if (rows.length > 0) break;
      await new Promise((r) => setTimeout(r, 200));
    }
    expect(rows).toHaveLength(1);
    const data = typeof rows[0]!.data === "string" ? (JSON.parse(rows[0]!.data) as Record<string, unknown>) : rows[0]!.data;
    expect(data).toMatchObject({ authorisation: "last-known-membership", membershipOnReplay: "confirmed", role: "operator" });
    expect((await get(jars.operator, "/loops")).status).toBe(200);
  }, 120_000);
});

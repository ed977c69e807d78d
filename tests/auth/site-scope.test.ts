/**
 * Site-scoped memberships over the route matrix: a member of tenant A limited to site "north"
 * (membership_sites) gets, for every route row with a loop or site id, the same answer as an
 * unscoped member for north's ids and a 404 (like a missing id) for the ids of A's other site
 * "south" (a write may refuse its body with 422 first, as in guard.test.ts, but never succeeds); lists (loops, notes, sites, alarms) hold only north's rows; writes on south's loop are
 * 404. The scope is set through the admin route, logged, and takes effect at once. On the socket
 * a scoped member joins its sites' rooms, not the tenant room (live states of other sites never
 * reach it), and a change of its sites ends the socket so the console reconnects with the new scope.
 */
import { QueryTypes } from "sequelize";
import { io as connect, type Socket } from "socket.io-client";
import { siteRoom, tenantRoom, type ClientToServerEvents, type ServerToClientEvents } from "@/lib/domain/events";
import { beforeAll, describe, expect, it } from "vitest";
import { ROLES, roleAtLeast, type Role } from "@/lib/domain/types";
import fs from "node:fs";
import path from "node:path";
import { REPO_ROOT } from "@/server/index";
import { setUpServerSuite } from "../helpers/server-suite";
import { FIXTURE_PASSWORD, type FixtureTenant } from "./fixture";
import { authedFetch, signIn, type CookieJar } from "./helpers";
import { ROUTES, type RouteCase } from "./route-matrix";

const suite = setUpServerSuite({ seed: false });
let south: FixtureTenant;
const scoped = new Map<Role, CookieJar>();
let adminJar: CookieJar;

beforeAll(async () => {
  const m = suite.srv.db.models;
  const site = await m.Site.create({ tenantId: suite.fx.a.id, slug: "south", name: "Brackwater South" });
  const [loopId] = (await suite.srv.db.sequelize.query(
    `INSERT INTO loops (tenant_id, site_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s, gain_value, ti_value, estimation_period_s)
     VALUES (?, ?, 'FIC-501', 'fic-501', 'flow', 'm3/h', 0, 100, 0.5, 0.5, 0.8, 6, 0.5)`,
    { replacements: [suite.fx.a.id, site.id] },
  )) as unknown as [number];
  south = { ...suite.fx.a, siteId: site.id, loopId: Number(loopId) };
  const admin = await signIn(suite.srv.url, suite.fx.a.users.admin.email, FIXTURE_PASSWORD);
  adminJar = admin.jar;
  const memberships = await suite.srv.db.sequelize.query<{ id: number; role: Role }>("SELECT id, role FROM memberships WHERE tenant_id = ? AND user_id IN (?)", {
    replacements: [suite.fx.a.id, ROLES.map((r) => suite.fx.a.users[r].id)],
    type: QueryTypes.SELECT,
  });
  for (const mm of memberships) {
    if (mm.role === "admin") continue; // the scoping admin keeps every site
    const r = await authedFetch(suite.srv.url, adminJar, `/api/admin/users/${mm.id}/sites`, {
      method: "PUT",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ siteIds: [suite.fx.a.siteId], reason: "client staff see their own site" }),
    });
    expect(r.status).toBe(200);
  }
  for (const role of ROLES.filter((r) => r !== "admin")) {
    const r = await signIn(suite.srv.url, suite.fx.a.users[role].email, FIXTURE_PASSWORD);
    if (!r.session) throw new Error(`sign-in failed for ${role}`);
    scoped.set(role, r.jar);
  }
}, 300_000);


const fill = (p: string, t: { loopId: number; siteId: number }) => p.replaceAll(":loopId", String(t.loopId)).replaceAll(":siteId", String(t.siteId)).replaceAll(":none", "999999");
const withIds = ROUTES.filter((c) => /:(loopId|siteId)/.test(c.path) && c.tenantScoped !== false && fs.existsSync(path.join(REPO_ROOT, "app", "api", c.file)));

function call(c: RouteCase, jar: CookieJar, t: { loopId: number; siteId: number }): Promise<Response> {
  return authedFetch(suite.srv.url, jar, fill(c.path, t), {
    method: c.method,
    ...(c.body !== undefined ? { body: JSON.stringify(c.body), headers: { "content-type": "application/json" } } : {}),
  });
}

describe("site-scoped members over the route matrix", () => {
  it("has rows with loop or site ids to check", () => {
    expect(withIds.length).toBeGreaterThanOrEqual(8);
  });

  for (const role of ["viewer", "operator", "engineer"] as const) {
    it(`${role} limited to north: north's ids as usual, south's ids 404 on every admitted route`, async () => {
      const jar = scoped.get(role)!;
      for (const c of withIds.filter((x) => roleAtLeast(role, x.minRole))) {
        const own = await call(c, jar, suite.fx.a);
        expect({ route: `${c.method} ${c.path}`, status: own.status, refused: [401, 403].includes(own.status) || own.status >= 500 }).toMatchObject({ refused: false });
        if (c.admitted) expect(c.admitted, `${c.method} ${c.path}: ${own.status}`).toContain(own.status);
        const other = await call(c, jar, south);
        // As in guard.test.ts: a read of an out-of-scope id is 404; a write may refuse its body first (422), never succeed.
        const expected = c.method === "GET" ? [404] : [404, 422];
        expect(expected, `${c.method} ${c.path} (south): ${other.status}`).toContain(other.status);
      }
    });
  }

  it("lists hold only north's rows; the unscoped admin sees both sites", async () => {
    const v = scoped.get("viewer")!;
    const loops = (await (await authedFetch(suite.srv.url, v, "/api/loops")).json()) as { loops: { id: number }[] };
    expect(loops.loops.map((l) => l.id)).toEqual([suite.fx.a.loopId]);
    const sites = (await (await authedFetch(suite.srv.url, v, "/api/admin/sites")).json()) as { sites: { id: number }[] };
    expect(sites.sites.map((s) => s.id)).toEqual([suite.fx.a.siteId]);
    const all = (await (await authedFetch(suite.srv.url, adminJar, "/api/loops")).json()) as { loops: { id: number }[] };
    expect(all.loops.map((l) => l.id).sort()).toEqual([suite.fx.a.loopId, south.loopId].sort());
  });

  it("notes: south's notes are invisible to north's members, and they cannot write on south's loop", async () => {
    const w = await authedFetch(suite.srv.url, adminJar, "/api/notes", { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ kind: "loop", loopId: south.loopId, text: "south only" }) });
    expect(w.status).toBe(201);
    const op = scoped.get("operator")!;
    const list = (await (await authedFetch(suite.srv.url, op, "/api/notes")).json()) as { notes: { text: string }[] };
    expect(list.notes.map((n) => n.text)).not.toContain("south only");
    const refused = await authedFetch(suite.srv.url, op, "/api/notes", { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ kind: "loop", loopId: south.loopId, text: "x" }) });
    expect(refused.status).toBe(404);
    const mine = await authedFetch(suite.srv.url, op, "/api/notes", { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ kind: "loop", loopId: suite.fx.a.loopId, text: "north note" }) });
    expect(mine.status).toBe(201);
  });

  it("alarm figures of a scoped member count only its sites' alarms", async () => {
    const [alarmId] = (await suite.srv.db.sequelize.query(
      "INSERT INTO alarms (tenant_id, loop_id, `condition`, priority, state, active, message) VALUES (?, ?, 'margin', 'high', 'unacknowledged', 1, '')",
      { replacements: [suite.fx.a.id, south.loopId] },
    )) as unknown as [number];
    const at = new Date(Date.now() - 3600_000);
    await suite.srv.db.sequelize.query("INSERT INTO alarm_occurrences (alarm_id, tenant_id, loop_id, `condition`, priority, started_at) VALUES (?,?,?, 'margin', 'high', ?)", {
      replacements: [alarmId, suite.fx.a.id, south.loopId, at],
    });
    const k = (await (await authedFetch(suite.srv.url, scoped.get("viewer")!, "/api/alarms/kpis")).json()) as { totalAlarms: number };
    expect(k.totalAlarms).toBe(0);
    const all = (await (await authedFetch(suite.srv.url, adminJar, "/api/alarms/kpis")).json()) as { totalAlarms: number };
    expect(all.totalAlarms).toBe(1);
  });

  it("the scope change is in the change log with its reason", async () => {
    const r = (await (await authedFetch(suite.srv.url, adminJar, "/api/admin/config-changes?entity=membership")).json()) as { changes: { reason: string | null; diff: Record<string, unknown> }[] };
    expect(r.changes.filter((c) => "siteIds" in c.diff && c.reason === "client staff see their own site")).toHaveLength(3);
  });
});

describe("site-scoped members on the socket", () => {
  it("joins its site's room, not the tenant room; a change of its sites ends the socket", async () => {
    const jar = scoped.get("viewer")!;
    const s: Socket<ServerToClientEvents, ClientToServerEvents> = connect(suite.srv.url, { transports: ["websocket"], extraHeaders: { cookie: jar.header() }, reconnection: false, forceNew: true });
    try {
      await new Promise<void>((resolve, reject) => {
        s.once("connect", () => resolve());
        s.once("connect_error", reject);
      });
      await expect
        .poll(async () => [...((await suite.srv.server.ctx.io!.fetchSockets()).find((x) => x.id === s.id)?.rooms ?? [])])
        .toEqual(expect.arrayContaining([siteRoom(suite.fx.a.siteId)]));
      const rooms = [...((await suite.srv.server.ctx.io!.fetchSockets()).find((x) => x.id === s.id)?.rooms ?? [])];
      expect(rooms).not.toContain(tenantRoom(suite.fx.a.id));
      expect(rooms).not.toContain(siteRoom(south.siteId));
      const ended = new Promise<string>((resolve) => s.once("session:ended", resolve));
      const [m] = await suite.srv.db.sequelize.query<{ id: number }>("SELECT id FROM memberships WHERE tenant_id = ? AND user_id = ?", {
        replacements: [suite.fx.a.id, suite.fx.a.users.viewer.id],
        type: QueryTypes.SELECT,
      });
      const r = await authedFetch(suite.srv.url, adminJar, `/api/admin/users/${m!.id}/sites`, {
        method: "PUT",
        headers: { "content-type": "application/json" },
        body: JSON.stringify({ siteIds: [suite.fx.a.siteId, south.siteId], reason: "now both sites" }),
      });
      expect(r.status).toBe(200);
      expect(await ended).toMatch(/sites changed/);
    } finally {
      s.disconnect();
    }
  });
});

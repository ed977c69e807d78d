/**
 * The role guard over every protected route (tests/auth/route-matrix.ts) for every role and
 * signed out, tenant isolation (another tenant's ids are 404), and withdrawal of a membership.
 * Role order viewer < operator < engineer < admin is docs/architecture.md §7.
 */
import fs from "node:fs";
import bcrypt from "bcryptjs";
import path from "node:path";
import { beforeAll, describe, expect, it } from "vitest";
import { notifyUserChanged } from "@/lib/data/server-context";
import { CONTEXT_TTL_MS } from "@/lib/auth/context-cache";
import { ROLES, roleAtLeast, type Role } from "@/lib/domain/types";
import { REPO_ROOT } from "@/server/index";
import { setUpServerSuite } from "../helpers/server-suite";
import { FIXTURE_PASSWORD, type FixtureTenant } from "./fixture";
import { authedFetch, signIn, type CookieJar } from "./helpers";
import { NOT_IN_MATRIX, ROUTES, type RouteCase } from "./route-matrix";

const suite = setUpServerSuite({ seed: false });
const jars = new Map<Role, CookieJar>();

beforeAll(async () => {
  for (const role of ROLES) {
    const r = await signIn(suite.srv.url, suite.fx.a.users[role].email, FIXTURE_PASSWORD);
    if (!r.session) throw new Error(`fixture sign-in failed for ${role}: ${r.error}`);
    jars.set(role, r.jar);
  }
});

function fill(p: string, t: FixtureTenant): string | null {
  const out = p
    .replaceAll(":loopId", String(t.loopId))
    .replaceAll(":siteId", String(t.siteId))
    .replaceAll(":none", "999999");
  return out.includes(":") && /\/:[a-zA-Z]/.test(out) ? null : out;
}

const routeExists = (c: RouteCase) => fs.existsSync(path.join(REPO_ROOT, "app", "api", c.file));
const present = ROUTES.filter((c) => routeExists(c) && fill(c.path, { loopId: 1, siteId: 1 } as FixtureTenant));
const skipped = ROUTES.filter((c) => !present.includes(c));

function call(c: RouteCase, jar: CookieJar | null, t: FixtureTenant): Promise<Response> {
  const url = fill(c.path, t)!;
  return authedFetch(suite.srv.url, jar, url, {
    method: c.method,
    ...(c.body !== undefined ? { body: JSON.stringify(c.body), headers: { "content-type": "application/json" } } : {}),
  });
}

function routeFiles(dir: string, prefix = ""): string[] {
  return fs.readdirSync(dir, { withFileTypes: true }).flatMap((e) =>
    e.isDirectory() ? routeFiles(path.join(dir, e.name), `${prefix}${e.name}/`) : e.name === "route.ts" ? [`${prefix}${e.name}`] : [],
  );
}

describe("route x role matrix", () => {
  it("has a row for every route file under app/api (or names why not)", () => {
    const covered = new Set([...ROUTES.map((c) => c.file), ...Object.keys(NOT_IN_MATRIX)]);
    const missing = routeFiles(path.join(REPO_ROOT, "app", "api")).filter((f) => !covered.has(f));
    expect(missing, "add these routes to tests/auth/route-matrix.ts").toEqual([]);
  });

  it("lists the routes it could not check yet (their file or fixture data is missing)", () => {
    // Not an assertion on behaviour: a visible list, so a missing route is noticed.
    console.info(`[guard matrix] checked ${present.length} rows; skipped: ${skipped.map((c) => `${c.method} ${c.path}`).join(", ") || "none"}`);
    expect(present.length).toBeGreaterThanOrEqual(2);
  });

  for (const c of present) {
    describe(`${c.method} ${c.path} (min ${c.minRole})`, () => {
      it("is 401 signed out", async () => {
        const res = await call(c, null, suite.fx.a);
        expect(res.status).toBe(401);
      });
      for (const role of ROLES) {
        const admitted = roleAtLeast(role, c.minRole);
        it(`${admitted ? "admits" : "refuses (403)"} ${role}`, async () => {
          const res = await call(c, jars.get(role)!, suite.fx.a);
          const why = `${res.status} ${await res.text()}`;
          if (!admitted) expect(res.status, why).toBe(403);
          else if (c.admitted) expect(c.admitted, why).toContain(res.status);
          else {
            expect([401, 403], why).not.toContain(res.status);
            expect(res.status, why).toBeLessThan(500);
          }
        });
      }
      const scoped = (c.tenantScoped ?? /:(loopId|siteId)/.test(c.path)) && c.method === "GET";
      if (scoped) {
        it("answers 404 for another tenant's id, even to an admin", async () => {
          const res = await call(c, jars.get("admin")!, suite.fx.b);
          expect(res.status).toBe(404);
        });
      }
    });
  }
});

describe("tenant isolation", () => {
  it("a site id of another tenant is 404, the same as an id that does not exist", async () => {
    const jar = jars.get("admin")!;
    const other = await authedFetch(suite.srv.url, jar, `/api/sites/${suite.fx.b.siteId}`);
    const missing = await authedFetch(suite.srv.url, jar, `/api/sites/999999`);
    expect(other.status).toBe(404);
    expect(missing.status).toBe(404);
    expect(await other.json()).toEqual(await missing.json());
  });

  it("a malformed id is 422, not 500", async () => {
    const res = await authedFetch(suite.srv.url, jars.get("viewer")!, `/api/sites/not-a-number`);
    expect(res.status).toBe(422);
  });
});

describe("tenant switching", () => {
  it("switches only into a tenant the user belongs to", async () => {
    const r = await signIn(suite.srv.url, suite.fx.both.email, FIXTURE_PASSWORD);
    const me = (await (await authedFetch(suite.srv.url, r.jar, "/api/session")).json()) as {
      context: { tenantId: number; role: Role };
      memberships: { tenantId: number }[];
    };
    expect(me.memberships.map((m) => m.tenantId).sort()).toEqual([suite.fx.a.id, suite.fx.b.id].sort());
    const target = me.context.tenantId === suite.fx.a.id ? suite.fx.b : suite.fx.a;

    const sw = await authedFetch(suite.srv.url, r.jar, "/api/session/tenant", {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ tenantId: target.id }),
    });
    expect(sw.status).toBe(200);
    r.jar.absorb(sw);
    const after = (await (await authedFetch(suite.srv.url, r.jar, "/api/session")).json()) as { context: { tenantId: number; role: Role } };
    expect(after.context.tenantId).toBe(target.id);
    expect(after.context.role).toBe(target === suite.fx.a ? "engineer" : "viewer");
    // The site of the new tenant is visible now, the old one's is not.
    expect((await authedFetch(suite.srv.url, r.jar, `/api/sites/${target.siteId}`)).status).toBe(200);

    const a = await signIn(suite.srv.url, suite.fx.a.users.admin.email, FIXTURE_PASSWORD);
    const refused = await authedFetch(suite.srv.url, a.jar, "/api/session/tenant", {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ tenantId: suite.fx.b.id }),
    });
    expect(refused.status).toBe(404);
    const bad = await authedFetch(suite.srv.url, a.jar, "/api/session/tenant", {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: "{not json",
    });
    expect(bad.status).toBe(422);
  });
});

describe("withdrawn rights take effect", () => {
  it("a revoked membership stops the API at once when announced, and within the cache time when not", async () => {
    const m = suite.srv.db.models;
    const user = await m.User.create({ email: "temp@brackwater.example", name: "Temp Hand", passwordHash: await bcrypt.hash(FIXTURE_PASSWORD, 4) });
    const membership = await m.Membership.create({ userId: user.id, tenantId: suite.fx.a.id, role: "operator" });
    const r = await signIn(suite.srv.url, "temp@brackwater.example", FIXTURE_PASSWORD);
    expect(r.error).toBeNull();
    expect((await authedFetch(suite.srv.url, r.jar, "/api/session")).status).toBe(200);

    // Demotion: operator -> viewer, announced.
    await membership.update({ role: "viewer" });
    notifyUserChanged(user.id);
    const me = (await (await authedFetch(suite.srv.url, r.jar, "/api/session")).json()) as { context: { role: Role } };
    expect(me.context.role).toBe("viewer");

    // Revocation without an announcement: refused once the short cache has expired.
    await membership.destroy();
    await new Promise((res) => setTimeout(res, CONTEXT_TTL_MS + 200));
    expect((await authedFetch(suite.srv.url, r.jar, "/api/session")).status).toBe(401);
  });

  it("a disabled user is refused at once when announced", async () => {
    const r = await signIn(suite.srv.url, suite.fx.b.users.operator.email, FIXTURE_PASSWORD);
    expect((await authedFetch(suite.srv.url, r.jar, "/api/session")).status).toBe(200);
    await suite.srv.db.models.User.update({ disabled: true }, { where: { id: suite.fx.b.users.operator.id } });
    notifyUserChanged(suite.fx.b.users.operator.id);
    expect((await authedFetch(suite.srv.url, r.jar, "/api/session")).status).toBe(401);
    const again = await signIn(suite.srv.url, suite.fx.b.users.operator.email, FIXTURE_PASSWORD);
    expect(again.session).toBeNull();
  });
});

/**
 * Routes, sessions and pages while MariaDB is down, through the real route handlers and session
 * guard (a session cookie made with next-auth's own encoder): operators act on their last-known
 * membership, a replay flags a membership revoked meanwhile, everything else answers 503 without
 * internal addresses. Uses a dedicated MariaDB (tests/alarms/outage-db.ts).
 */
import { encode } from "next-auth/jwt";
import { describe, expect, it, vi } from "vitest";
import { getConfig } from "@/lib/config";
import { setSharedDb } from "@/lib/data/db/sequelize";
import { setServerContext } from "@/lib/data/server-context";
import type { Role, TenantContext } from "@/lib/domain/types";
import { createDatabaseGate } from "@/server/db-gate";
import fs from "node:fs";
import { QueryTypes } from "sequelize";
import { FakeClock, loopState, polesWithDecay, tempJournal, testContext } from "./helpers";
import { flushEventually, gateAnswer, retryAfterRestart, setUpOutageDb, startOutageService } from "./outage-db";
import { jsonRequest } from "@/tests/helpers/json-request";

const T0 = Date.UTC(2026, 5, 2, 22, 0, 0);
const db = setUpOutageDb("rg_outage_routes");

// The session cookie of the request under test (route handlers read it through next/headers).
let sessionCookie: string | null = null;
vi.mock("next/headers", () => ({
  cookies: async () => ({
    getAll: () =>
      sessionCookie ? [{ name: "next-auth.session-token", value: sessionCookie }] : [],
  }),
}));

describe("MariaDB outage, as routes and pages see it", () => {
  it("operators act on their last-known membership past the role cache; replay flags a membership revoked meanwhile; pages, APIs and sign-in say 503 without addresses", async () => {
    await db.start();
    setSharedDb({ sequelize: db.sequelize, models: db.models });
    const clock = new FakeClock(T0 + 7200_000);
    const ctx = testContext(clock);
    const journal = tempJournal();
    const svc = await startOutageService(db, ctx, journal);
    ctx.services.set("alarms", svc);
    setServerContext(ctx);
    const routes = {
      list: await import("@/app/api/alarms/route"),
      ack: await import("@/app/api/alarms/[alarmId]/acknowledge/route"),
      shelve: await import("@/app/api/alarms/[alarmId]/shelve/route"),
      loops: await import("@/app/api/loops/route"),
    };
    const { getAuthOptions } = await import("@/lib/auth/options");
    const cookieFor = async (u: TenantContext) =>
      encode({
        token: {
          uid: u.userId,
          tid: u.tenantId,
          sv: 0,
          sid: `sid-${u.userId}`,
          name: u.name,
          email: u.email,
        },
        secret: getConfig().NEXTAUTH_SECRET,
        maxAge: 3600,
      });
    const as = async (u: TenantContext | null) =>
      void (sessionCookie = u ? await cookieFor(u) : null);
    const post = (body: unknown) => jsonRequest("POST", "/api/x", body);
    const p = (id: number) => ({ params: Promise.resolve({ alarmId: String(id) }) });
    const roleOf = (r: Role) => db.fx.users[r];
    for (const r of ["operator", "engineer", "viewer"] as const)
      await db.models.Membership.create({ userId: roleOf(r).userId, tenantId: db.fx.tenantId, role: r });

    // Alarms active; the operator and the engineer have used the console (their membership is known).
    for (const d of [0.1, 0.45])
      svc.onTrackerUpdate(loopState(db.fx.loopId, db.fx.tenantId, clock.now(), polesWithDecay(d)));
    const margin = svc
      .list(db.fx.tenantId, { loopId: db.fx.loopId })
      .find((a) => a.condition === "margin")!;
    expect(margin.state).toBe("unacknowledged");
    await svc.flush();
    for (const u of [roleOf("operator"), roleOf("engineer")]) {
      await as(u);
      expect((await routes.list.GET(new Request("http://127.0.0.1/api/alarms"))).status).toBe(200);
    }

    await db.stop();
    svc.writer.stop(); // hold the backlog so the membership can change before it is written
    await new Promise((r) => setTimeout(r, 3_300)); // past the 3 s role cache (lib/auth/context-cache.ts)

    // The operator acknowledges: accepted on the last-known membership and journaled as such.
    await as(roleOf("operator"));
    const ackRes = await routes.ack.POST(
      post({ comment: "seen on the board during the outage" }),
      p(margin.id),
    );
    expect(ackRes.status).toBe(200);
    expect(((await ackRes.json()) as { alarm: { state: string } }).alarm.state).toBe(
      "acknowledged",
    );
    // The engineer shelves it; this membership will have been removed when the database is back.
    await as(roleOf("engineer"));
    const shelveRes = await routes.shelve.POST(
      post({ minutes: 30, reason: "transmitter being replaced" }),
      p(margin.id),
    );
    expect(shelveRes.status).toBe(200);
    const lines = fs
      .readFileSync(journal, "utf8")
      .trim()
      .split("\n")
      .map((l) => JSON.parse(l) as { kind: string; data: Record<string, unknown> | null });
    expect(lines.find((l) => l.kind === "acknowledge")!.data).toMatchObject({
      authorisation: "last-known-membership",
      role: "operator",
      requiredRole: "operator",
    });

    // Someone whose membership was never read in this process gets 503, not 500 and not 401.
    await as(roleOf("viewer"));
    const unknownRes = await routes.list.GET(new Request("http://127.0.0.1/api/alarms"));
    expect(unknownRes.status).toBe(503);
    // An API route that needs the database: 503 "database unavailable", and no address in it.
    await as(roleOf("operator"));
    const loopsRes = await routes.loops.GET();
    expect(loopsRes.status).toBe(503);
    const loopsBody = await loopsRes.text();
    const unknownBody = await unknownRes.text();
    for (const body of [loopsBody, unknownBody]) {
      expect(body).toMatch(/Database unavailable/);
      expect(body).not.toMatch(/127\.0\.0\.1|ECONNREFUSED|ENOENT|\.sock|:\d{4,5}\b/);
    }
    // Sign-in: a clear message, not the driver's.
    const provider = getAuthOptions().providers[0] as unknown as {
      options: { authorize: (c: unknown, r: unknown) => Promise<unknown> };
    };
    const signIn = await provider.options
      .authorize(
        { email: "operator@harrowgate.example", password: "whatever-password" },
        { headers: {} },
      )
      .then(
        () => null,
        (e: Error) => e.message,
      );
    expect(signIn).toMatch(/database is unavailable/);
    expect(signIn).not.toMatch(/127\.0\.0\.1|ECONNREFUSED|ENOENT|\.sock/);
    // A page: the server's gate answers 503 with its own page (the alarm list passes through).
    const gate = createDatabaseGate(() => db.sequelize.query("SELECT 1"));
    const page = await gateAnswer(gate, "/loops");
    expect(page.status).toBe(503);
    expect(page.body).toMatch(/Database unavailable/);
    expect(page.body).not.toMatch(/127\.0\.0\.1|ECONNREFUSED|ENOENT|\.sock/);
    expect((await gateAnswer(gate, "/alarms")).status).toBe(0); // not answered by the gate: Next renders it

    // The database returns; meanwhile an admin removed the engineer's membership.
    await db.start();
    await retryAfterRestart(() => db.models.Membership.destroy({ where: { userId: roleOf("engineer").userId, tenantId: db.fx.tenantId } }));
    await flushEventually(svc);
    const rows = (await db.sequelize.query(
      "SELECT kind, user_id, data FROM alarm_events WHERE alarm_id = ? AND kind IN ('acknowledge','shelve') ORDER BY journal_id DESC LIMIT 2",
      {
        replacements: [margin.id],
        type: QueryTypes.SELECT,
      },
    )) as { kind: string; user_id: number; data: string | Record<string, unknown> }[];
    const dataOf = (k: string) => {
      const d = rows.find((r) => r.kind === k)!.data;
      return typeof d === "string" ? (JSON.parse(d) as Record<string, unknown>) : d;
    };
    expect(dataOf("acknowledge")).toMatchObject({
      authorisation: "last-known-membership",
      membershipOnReplay: "confirmed",
    });
    expect(dataOf("shelve")).toMatchObject({
      authorisation: "last-known-membership",
      membershipOnReplay: "revoked",
      role: "engineer",
    });
    expect(
      await gateAnswer(
        createDatabaseGate(() => db.sequelize.query("SELECT 1")),
        "/loops",
      ),
    ).toMatchObject({ status: 0 });
    setServerContext(null);
    setSharedDb(null);
    await svc.stop();
  }, 90_000);
});

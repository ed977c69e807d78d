/**
 * MariaDB stopped while alarms change, are acknowledged and shelved, then started again: nothing
 * is lost and the order is kept. Uses a dedicated MariaDB (scripts/mariadb-server.ts) because the
 * run's shared test server must not be stopped. The last part goes through the real route
 * handlers and session guard (a session cookie made with next-auth's own encoder): operators act
 * on their last-known membership, everything else answers 503 without internal addresses.
 */
import { publicOrigin } from "@/lib/config";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { QueryTypes, type Sequelize } from "sequelize";
import { encode } from "next-auth/jwt";
import { afterAll, beforeAll, describe, expect, it, vi } from "vitest";
import { getConfig } from "@/lib/config";
import { setSharedDb } from "@/lib/data/db/sequelize";
import { setServerContext } from "@/lib/data/server-context";
import type { Role, TenantContext } from "@/lib/domain/types";
import { createDatabaseGate } from "@/server/db-gate";
import { ensureMariaDb, freePort, type MariaDbHandle } from "@/scripts/mariadb-server";
import { migrateUp } from "@/lib/data/db/migrate";
import { createSequelize } from "@/lib/data/db/sequelize";
import { initModels, type Models } from "@/models";
import { AlarmService } from "@/server/alarms/service";
import {
  createFixture,
  FakeClock,
  loopState,
  polesWithDecay,
  setTenantPolicy,
  tempJournal,
  testContext,
  type Fixture,
} from "./helpers";

const T0 = Date.UTC(2026, 5, 2, 22, 0, 0);
let dir: string;
let port: number;
let handle: MariaDbHandle;
let sequelize: Sequelize;
let fx: Fixture;
let models: Models;

// The session cookie of the request under test (route handlers read it through next/headers).
let sessionCookie: string | null = null;
vi.mock("next/headers", () => ({
  cookies: async () => ({
    getAll: () =>
      sessionCookie ? [{ name: "next-auth.session-token", value: sessionCookie }] : [],
  }),
}));

// Not `ephemeral`: its watchdog deletes the data dir when the server exits, and this test restarts it.
const startDb = () =>
  ensureMariaDb({
    dataDir: path.join(dir, "data"),
    port,
    socket: path.join(dir, "s.sock"),
    ephemeral: false,
    watchPid: process.pid,
    allowApt: false,
  });

beforeAll(async () => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-out-"));
  port = await freePort();
  handle = await startDb();
  const root = createSequelize({ socket: handle.socket, database: "mysql", user: "root" });
  await root.query("CREATE DATABASE rg_outage CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci");
  await root.close();
  sequelize = createSequelize({
    socket: handle.socket,
    database: "rg_outage",
    user: "root",
    poolMax: 3,
  });
  await migrateUp(sequelize);
  models = initModels(sequelize);
  fx = await createFixture(models);
  await setTenantPolicy(sequelize, fx.tenantId, { onDelayS: 0, offDelayS: 0, advisoryOnDelayS: 0 });
});

afterAll(async () => {
  await sequelize?.close().catch(() => {});
  await handle?.stop().catch(() => {});
  if (dir) fs.rmSync(dir, { recursive: true, force: true });
});

/** After a database restart the first query on a stale pooled connection may fail: retry. */
async function flushEventually(svc: AlarmService): Promise<void> {
  for (let i = 0; ; i++) {
    try {
      await svc.flush();
      return;
    } catch (e) {
      if (i >= 30) throw e;
      await new Promise((r) => setTimeout(r, 200));
    }
  }
}

async function events(alarmIds: number[]) {
  return (await sequelize.query(
    `SELECT journal_id, alarm_id, kind, to_state, user_id FROM alarm_events WHERE alarm_id IN (${alarmIds.map(() => "?").join(",")}) ORDER BY journal_id`,
    { replacements: alarmIds, type: QueryTypes.SELECT },
  )) as {
    journal_id: string;
    alarm_id: number;
    kind: string;
    to_state: string;
    user_id: number | null;
  }[];
}

describe("MariaDB outage", () => {
  it("transitions, acknowledgements and shelves during an outage reach the database in order once it is back", async () => {
    const clock = new FakeClock(T0);
    const ctx = testContext(clock);
    const journal = tempJournal();
    const svc = await AlarmService.start(ctx, {
      sequelize,
      journalPath: journal,
      retryMs: 100,
      quiet: true,
    });
    const upd = (d: number) =>
      svc.onTrackerUpdate(loopState(fx.loopId, fx.tenantId, clock.now(), polesWithDecay(d)));
    const byCond = (c: string) =>
      svc.list(fx.tenantId, { loopId: fx.loopId }).find((a) => a.condition === c)!;
    const margin = byCond("margin").id;
    const unstable = byCond("unstable").id;
    const all = svc.list(fx.tenantId, { loopId: fx.loopId }).map((a) => a.id);

    upd(0.42);
    await svc.flush();
    const before = (await events(all)).length;

    await handle.stop(); // the database goes away
    const expected: string[] = [];
    const note = () =>
      expected.push(...svc.writer.pending.map((e) => `${e.alarmId}:${e.kind}:${e.to}`));
    await clock.advance(1000);
    svc.acknowledge(fx.users.operator, margin, "seen during outage");
    await clock.advance(1000);
    upd(0.1); // clears
    await clock.advance(1000);
    upd(1.3); // unstable: urgent; margin suppressed by design
    await clock.advance(1000);
    svc.acknowledge(fx.users.operator, unstable, "gain reduced by the board operator");
    await clock.advance(1000);
    upd(0.45); // unstable clears, margin back
    svc.shelve(fx.users.operator, margin, 60, "instrument technician on the transmitter");
    note();
    expect(expected.length).toBeGreaterThanOrEqual(8);
    // Writes are failing: held in order, health says so, the journal holds every line.
    await new Promise((r) => setTimeout(r, 400));
    expect(svc.writer.pending.length).toBe(expected.length);
    expect(svc.health().status).toBe("degraded");
    const lines = fs.readFileSync(journal, "utf8").trim().split("\n").length;
    expect(lines).toBe(expected.length);

    handle = await startDb(); // back
    await flushEventually(svc);
    const after = await events(all);
    expect(after.length - before).toBe(expected.length);
    expect(after.slice(before).map((e) => `${e.alarm_id}:${e.kind}:${e.to_state}`)).toEqual(
      expected,
    );
    const ackRows = after.filter((e) => e.kind === "acknowledge");
    expect(ackRows.every((e) => e.user_id === fx.users.operator.userId)).toBe(true);
    const [row] = (await sequelize.query("SELECT state, shelved_until FROM alarms WHERE id = ?", {
      replacements: [margin],
      type: QueryTypes.SELECT,
    })) as { state: string; shelved_until: Date }[];
    expect(row!.state).toBe("shelved");
    expect(new Date(row!.shelved_until).getTime()).toBe(clock.now() + 60 * 60_000);
    expect(svc.health().status).toBe("ok");
    expect(fs.statSync(journal).size).toBe(0);
    await svc.stop();
  });

  it("a server restart during the outage replays the journal; a full journal refuses operator actions with 503 and loses nothing", async () => {
    handle = await startDb(); // reuses the running server (idempotent)
    const clock = new FakeClock(T0 + 3600_000);
    const journal = tempJournal();
    let ctx = testContext(clock);
    let svc = await AlarmService.start(ctx, {
      sequelize,
      journalPath: journal,
      journalMaxBytes: 6000,
      retryMs: 100,
      quiet: true,
    });
    const margin = svc
      .list(fx.tenantId, { loopId: fx.loopId })
      .find((a) => a.condition === "margin")!.id;
    svc.unshelve(fx.users.operator, margin, "work finished"); // still active: announced again
    svc.acknowledge(fx.users.operator, margin, null);
    await svc.flush();
    const before = (await events([margin])).length;

    await handle.stop();
    const kinds: string[] = [];
    for (let k = 0; k < 12; k++) {
      await clock.advance(1000);
      svc.onTrackerUpdate(
        loopState(fx.loopId, fx.tenantId, clock.now(), polesWithDecay(k % 2 ? 0.45 : 0.1)),
      );
    }
    kinds.push(...svc.writer.pending.map((e) => `${e.kind}:${e.to}`));
    // 6000 bytes hold only a few lines: the journal is full, operator actions are refused, health is critical.
    expect(svc.health().status).toBe("critical");
    expect(() => svc.acknowledge(fx.users.operator, margin, null)).toThrow(/journal is full/);
    try {
      svc.acknowledge(fx.users.operator, margin, null);
    } catch (e) {
      expect((e as { status: number }).status).toBe(503);
    }
    const journalled = fs.readFileSync(journal, "utf8").trim().split("\n").length;
    expect(journalled).toBeLessThan(kinds.length);
    // Restart the server while the database is still down: the transitions held in memory are
    // written to the journal at shutdown (past its limit), so all come back.
    await svc.stop();
    expect(fs.readFileSync(journal, "utf8").trim().split("\n")).toHaveLength(kinds.length);
    handle = await startDb();
    ctx = testContext(clock);
    for (let i = 0; ; i++) {
      try {
        svc = await AlarmService.start(ctx, {
          sequelize,
          journalPath: journal,
          journalMaxBytes: 6000,
          retryMs: 100,
          quiet: true,
        });
        break;
      } catch (e) {
        if (i >= 30) throw e; // a stale pooled connection right after the restart
        await new Promise((r) => setTimeout(r, 200));
      }
    }
    await flushEventually(svc);
    const after = await events([margin]);
    expect(after.slice(before).map((e) => `${e.kind}:${e.to_state}`)).toEqual(kinds);
    expect(svc.health().status).toBe("ok");
    await svc.stop();
  });

  it("operators act on their last-known membership past the role cache; replay flags a membership revoked meanwhile; pages, APIs and sign-in say 503 without addresses", async () => {
    handle = await startDb();
    setSharedDb({ sequelize, models });
    const clock = new FakeClock(T0 + 7200_000);
    const ctx = testContext(clock);
    const journal = tempJournal();
    const svc = await AlarmService.start(ctx, {
      sequelize,
      journalPath: journal,
      retryMs: 100,
      quiet: true,
    });
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
    const post = (body: unknown) =>
      new Request("http://127.0.0.1/api/x", {
        method: "POST",
        headers: { "content-type": "application/json", origin: publicOrigin() },
        body: JSON.stringify(body),
      });
    const p = (id: number) => ({ params: Promise.resolve({ alarmId: String(id) }) });
    const roleOf = (r: Role) => fx.users[r];
    for (const r of ["operator", "engineer", "viewer"] as const)
      await models.Membership.create({ userId: roleOf(r).userId, tenantId: fx.tenantId, role: r });

    // Alarms active; the operator and the engineer have used the console (their membership is known).
    for (const d of [0.1, 0.45])
      svc.onTrackerUpdate(loopState(fx.loopId, fx.tenantId, clock.now(), polesWithDecay(d)));
    const margin = svc
      .list(fx.tenantId, { loopId: fx.loopId })
      .find((a) => a.condition === "margin")!;
    expect(margin.state).toBe("unacknowledged");
    await svc.flush();
    for (const u of [roleOf("operator"), roleOf("engineer")]) {
      await as(u);
      expect((await routes.list.GET(new Request("http://127.0.0.1/api/alarms"))).status).toBe(200);
    }

    await handle.stop();
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
    const gate = createDatabaseGate(() => sequelize.query("SELECT 1"));
    const page = await gateAnswer(gate, "/loops");
    expect(page.status).toBe(503);
    expect(page.body).toMatch(/Database unavailable/);
    expect(page.body).not.toMatch(/127\.0\.0\.1|ECONNREFUSED|ENOENT|\.sock/);
    expect((await gateAnswer(gate, "/alarms")).status).toBe(0); // not answered by the gate: Next renders it

    // The database returns; meanwhile an admin removed the engineer's membership.
    handle = await startDb();
    for (let i = 0; ; i++) {
      try {
        await models.Membership.destroy({
          where: { userId: roleOf("engineer").userId, tenantId: fx.tenantId },
        });
        break;
      } catch (e) {
        if (i >= 30) throw e;
        await new Promise((r) => setTimeout(r, 200));
      }
    }
    await flushEventually(svc);
    const rows = (await sequelize.query(
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
        createDatabaseGate(() => sequelize.query("SELECT 1")),
        "/loops",
      ),
    ).toMatchObject({ status: 0 });
    setServerContext(null);
    setSharedDb(null);
    await svc.stop();
  }, 90_000);
});

/** What the page gate does with a GET of `path`: status 0 when it lets the request through. */
async function gateAnswer(
  gate: ReturnType<typeof createDatabaseGate>,
  path: string,
): Promise<{ status: number; body: string }> {
  let status = 0;
  let body = "";
  const res = {
    writeHead(s: number) {
      status = s;
      return res;
    },
    end(b?: string) {
      body = b ?? "";
    },
  };
  await gate({ method: "GET", url: path } as never, res as never);
  return { status, body };
}

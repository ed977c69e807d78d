/**
 * MariaDB stopped while alarms change, are acknowledged and shelved, then started again: nothing
 * is lost and the order is kept. Uses a dedicated MariaDB (lib/db/mariadb-server.ts) because the
 * run's shared test server must not be stopped.
 */
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { QueryTypes, type Sequelize } from "sequelize";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { ensureMariaDb, freePort, type MariaDbHandle } from "@/lib/db/mariadb-server";
import { migrateUp } from "@/lib/db/migrate";
import { createSequelize } from "@/lib/db/sequelize";
import { initModels } from "@/models";
import { AlarmService } from "@/server/alarms/service";
import { createFixture, FakeClock, loopState, polesWithDecay, setTenantPolicy, tempJournal, testContext, type Fixture } from "./helpers";

const T0 = Date.UTC(2026, 5, 2, 22, 0, 0);
let dir: string;
let port: number;
let handle: MariaDbHandle;
let sequelize: Sequelize;
let fx: Fixture;

// Not `ephemeral`: its watchdog deletes the data dir when the server exits, and this test restarts it.
const startDb = () =>
  ensureMariaDb({ dataDir: path.join(dir, "data"), port, socket: path.join(dir, "s.sock"), ephemeral: false, watchPid: process.pid, allowApt: false });

beforeAll(async () => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-out-"));
  port = await freePort();
  handle = await startDb();
  const root = createSequelize({ socket: handle.socket, database: "mysql", user: "root" });
  await root.query("CREATE DATABASE rg_outage CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci");
  await root.close();
  sequelize = createSequelize({ socket: handle.socket, database: "rg_outage", user: "root", poolMax: 3 });
  await migrateUp(sequelize);
  fx = await createFixture(initModels(sequelize));
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
  )) as { journal_id: string; alarm_id: number; kind: string; to_state: string; user_id: number | null }[];
}

describe("MariaDB outage", () => {
  it("transitions, acknowledgements and shelves during an outage reach the database in order once it is back", async () => {
    const clock = new FakeClock(T0);
    const ctx = testContext(clock);
    const journal = tempJournal();
    const svc = await AlarmService.start(ctx, { sequelize, journalPath: journal, retryMs: 100, quiet: true });
    const upd = (d: number) => svc.onTrackerUpdate(loopState(fx.loopId, fx.tenantId, clock.now(), polesWithDecay(d)));
    const byCond = (c: string) => svc.list(fx.tenantId, { loopId: fx.loopId }).find((a) => a.condition === c)!;
    const margin = byCond("margin").id;
    const unstable = byCond("unstable").id;
    const all = svc.list(fx.tenantId, { loopId: fx.loopId }).map((a) => a.id);

    upd(0.42);
    await svc.flush();
    const before = (await events(all)).length;

    await handle.stop(); // the database goes away
    const expected: string[] = [];
    const note = () => expected.push(...svc.writer.pending.map((e) => `${e.alarmId}:${e.kind}:${e.to}`));
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
    expect(after.slice(before).map((e) => `${e.alarm_id}:${e.kind}:${e.to_state}`)).toEqual(expected);
    const ackRows = after.filter((e) => e.kind === "acknowledge");
    expect(ackRows.every((e) => e.user_id === fx.users.operator.userId)).toBe(true);
    const [row] = (await sequelize.query("SELECT state, shelved_until FROM alarms WHERE id = ?", { replacements: [margin], type: QueryTypes.SELECT })) as { state: string; shelved_until: Date }[];
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
    let svc = await AlarmService.start(ctx, { sequelize, journalPath: journal, journalMaxBytes: 6000, retryMs: 100, quiet: true });
    const margin = svc.list(fx.tenantId, { loopId: fx.loopId }).find((a) => a.condition === "margin")!.id;
    svc.unshelve(fx.users.operator, margin, "work finished"); // still active: announced again
    svc.acknowledge(fx.users.operator, margin, null);
    await svc.flush();
    const before = (await events([margin])).length;

    await handle.stop();
    const kinds: string[] = [];
    for (let k = 0; k < 12; k++) {
      await clock.advance(1000);
      svc.onTrackerUpdate(loopState(fx.loopId, fx.tenantId, clock.now(), polesWithDecay(k % 2 ? 0.45 : 0.1)));
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
        svc = await AlarmService.start(ctx, { sequelize, journalPath: journal, journalMaxBytes: 6000, retryMs: 100, quiet: true });
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
});

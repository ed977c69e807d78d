/**
 * MariaDB stopped while alarms change, are acknowledged and shelved, then started again: nothing
 * is lost and the order is kept, also across a server restart with a full journal. Uses a
 * dedicated MariaDB (tests/alarms/outage-db.ts); what routes, sessions and pages answer during an
 * outage is in outage-routes.test.ts.
 */
import fs from "node:fs";
import { QueryTypes } from "sequelize";
import { describe, expect, it } from "vitest";
import { FakeClock, loopState, polesWithDecay, tempJournal, testContext } from "./helpers";
import { eventsOf, flushEventually, retryAfterRestart, setUpOutageDb, startOutageService } from "./outage-db";

const T0 = Date.UTC(2026, 5, 2, 22, 0, 0);
const db = setUpOutageDb("rg_outage");

describe("MariaDB outage", () => {
  it("transitions, acknowledgements and shelves during an outage reach the database in order once it is back", async () => {
    const clock = new FakeClock(T0);
    const ctx = testContext(clock);
    const journal = tempJournal();
    const svc = await startOutageService(db, ctx, journal);
    const upd = (d: number) =>
      svc.onTrackerUpdate(loopState(db.fx.loopId, db.fx.tenantId, clock.now(), polesWithDecay(d)));
    const byCond = (c: string) =>
      svc.list(db.fx.tenantId, { loopId: db.fx.loopId }).find((a) => a.condition === c)!;
    const margin = byCond("margin").id;
    const unstable = byCond("unstable").id;
    const all = svc.list(db.fx.tenantId, { loopId: db.fx.loopId }).map((a) => a.id);

    upd(0.42);
    await svc.flush();
    const before = (await eventsOf(db, all)).length;

    await db.stop(); // the database goes away
    const expected: string[] = [];
    const note = () =>
      expected.push(...svc.writer.pending.map((e) => `${e.alarmId}:${e.kind}:${e.to}`));
    await clock.advance(1000);
    svc.acknowledge(db.fx.users.operator, margin, "seen during outage");
    await clock.advance(1000);
    upd(0.1); // clears
    await clock.advance(1000);
    upd(1.3); // unstable: urgent; margin suppressed by design
    await clock.advance(1000);
    svc.acknowledge(db.fx.users.operator, unstable, "gain reduced by the board operator");
    await clock.advance(1000);
    upd(0.45); // unstable clears, margin back
    svc.shelve(db.fx.users.operator, margin, 60, "instrument technician on the transmitter");
    note();
    expect(expected.length).toBeGreaterThanOrEqual(8);
    // Writes are failing: held in order, health says so, the journal holds every line.
    await new Promise((r) => setTimeout(r, 400));
    expect(svc.writer.pending.length).toBe(expected.length);
    expect(svc.health().status).toBe("degraded");
    const lines = fs.readFileSync(journal, "utf8").trim().split("\n").length;
    expect(lines).toBe(expected.length);

    await db.start(); // back
    await flushEventually(svc);
    const after = await eventsOf(db, all);
    expect(after.length - before).toBe(expected.length);
    expect(after.slice(before).map((e) => `${e.alarm_id}:${e.kind}:${e.to_state}`)).toEqual(
      expected,
    );
    const ackRows = after.filter((e) => e.kind === "acknowledge");
    expect(ackRows.every((e) => e.user_id === db.fx.users.operator.userId)).toBe(true);
    const [row] = (await db.sequelize.query("SELECT state, shelved_until FROM alarms WHERE id = ?", {
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
    await db.start(); // reuses the running server (idempotent)
    const clock = new FakeClock(T0 + 3600_000);
    const journal = tempJournal();
    let ctx = testContext(clock);
    let svc = await startOutageService(db, ctx, journal, 6000);
    const margin = svc
      .list(db.fx.tenantId, { loopId: db.fx.loopId })
      .find((a) => a.condition === "margin")!.id;
    svc.unshelve(db.fx.users.operator, margin, "work finished"); // still active: announced again
    svc.acknowledge(db.fx.users.operator, margin, null);
    await svc.flush();
    const before = (await eventsOf(db, [margin])).length;

    await db.stop();
    const kinds: string[] = [];
    for (let k = 0; k < 12; k++) {
      await clock.advance(1000);
      svc.onTrackerUpdate(
        loopState(db.fx.loopId, db.fx.tenantId, clock.now(), polesWithDecay(k % 2 ? 0.45 : 0.1)),
      );
    }
    kinds.push(...svc.writer.pending.map((e) => `${e.kind}:${e.to}`));
    // 6000 bytes hold only a few lines: the journal is full, operator actions are refused, health is critical.
    expect(svc.health().status).toBe("critical");
    expect(() => svc.acknowledge(db.fx.users.operator, margin, null)).toThrow(/journal is full/);
    try {
      svc.acknowledge(db.fx.users.operator, margin, null);
    } catch (e) {
      expect((e as { status: number }).status).toBe(503);
    }
    const journalled = fs.readFileSync(journal, "utf8").trim().split("\n").length;
    expect(journalled).toBeLessThan(kinds.length);
    // Restart the server while the database is still down: the transitions held in memory are
    // written to the journal at shutdown (past its limit), so all come back.
    await svc.stop();
    expect(fs.readFileSync(journal, "utf8").trim().split("\n")).toHaveLength(kinds.length);
    await db.start();
    ctx = testContext(clock);
    svc = await retryAfterRestart(() => startOutageService(db, ctx, journal, 6000));
    await flushEventually(svc);
    const after = await eventsOf(db, [margin]);
    expect(after.slice(before).map((e) => `${e.kind}:${e.to_state}`)).toEqual(kinds);
    expect(svc.health().status).toBe("ok");
    await svc.stop();
  });
});

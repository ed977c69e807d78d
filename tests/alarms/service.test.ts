/**
 * The alarm service against a real MariaDB (the run's throw-away server) with a fake clock:
 * journal before announce, evaluation of tracker updates, person actions and the role matrix,
 * shelve expiry, restart recovery, and e-mail through the in-process SMTP sink.
 */
import fs from "node:fs";
import { QueryTypes } from "sequelize";
import { describe, expect, it } from "vitest";
import { ForbiddenError, NotFoundError, ValidationError } from "@/lib/domain/errors";
import { IllegalTransitionError } from "@/lib/domain/alarms/state-machine";
import type { AlarmDto } from "@/lib/domain/types";
import type { AlarmService } from "@/server/alarms/service";
import type { ServerContext } from "@/server/context";
import { startMail, type MailService } from "@/server/mail";
import { FakeClock, loopState, polesWithDecay, startAlarmService, settle, tempJournal, testContext, setUpAlarmDb } from "./helpers";

const T0 = Date.UTC(2026, 2, 9, 6, 0, 0);

const suite = setUpAlarmDb("alarms", { onDelayS: 0, offDelayS: 0, advisoryOnDelayS: 0, shelveMaxMinutes: 120 });


const start = (clock: FakeClock, journalPath: string, ctx?: ServerContext) => startAlarmService(suite.db.sequelize, clock, journalPath, ctx);

function marginPoint(svc: AlarmService): AlarmDto {
  return svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId }).find((a) => a.condition === "margin")!;
}

async function dbRow(alarmId: number) {
  const [row] = (await suite.db.sequelize.query("SELECT state, active, priority, shelved_until, journal_seq FROM alarms WHERE id = ?", {
    replacements: [alarmId],
    type: QueryTypes.SELECT,
  })) as { state: string; active: number; priority: string; shelved_until: Date | null; journal_seq: number }[];
  return row!;
}

describe("alarm service", () => {
  it("creates one alarm point per loop and operator condition (unstable, margin, rim-forecast), all normal", async () => {
    const clock = new FakeClock(T0);
    const { svc } = await start(clock, tempJournal());
    const mine = svc.list(suite.fx.tenantId);
    expect(mine.map((a) => a.condition).sort()).toEqual(["margin", "rim-forecast", "unstable"]);
    expect(mine.every((a) => a.state === "normal")).toBe(true);
    expect(svc.list(suite.fx.otherTenantId).every((a) => a.loopId === suite.fx.otherLoopId)).toBe(true);
    await svc.stop();
  });

  it("journals (fsync'd line on disk) before announcing, then writes MariaDB in order", async () => {
    const clock = new FakeClock(T0);
    const journal = tempJournal();
    const { svc, ctx } = await start(clock, journal);
    const seenOnDisk: boolean[] = [];
    ctx.bus.on("alarm:changed", (a) => {
      const lines = fs.readFileSync(journal, "utf8").trim().split("\n").map((l) => JSON.parse(l) as { alarmId: number; to: string });
      seenOnDisk.push(lines.some((l) => l.alarmId === a.id && l.to === a.state));
    });
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.42)));
    const m = marginPoint(svc);
    expect(m.state).toBe("unacknowledged");
    expect(m.priority).toBe("low");
    expect(seenOnDisk).toEqual([true]);
    await svc.flush();
    const row = await dbRow(m.id);
    expect(row.state).toBe("unacknowledged");
    const events = (await suite.db.sequelize.query("SELECT kind, from_state, to_state FROM alarm_events WHERE alarm_id = ? ORDER BY journal_id", {
      replacements: [m.id],
      type: QueryTypes.SELECT,
    })) as { kind: string; from_state: string; to_state: string }[];
    expect(events.at(-1)).toEqual({ kind: "activate", from_state: "normal", to_state: "unacknowledged" });
    const occ = (await suite.db.sequelize.query("SELECT ended_at, area_id FROM alarm_occurrences WHERE alarm_id = ?", { replacements: [m.id], type: QueryTypes.SELECT })) as { ended_at: Date | null; area_id: number }[];
    expect(occ).toHaveLength(1);
    expect(occ[0]!.area_id).toBe(suite.fx.areaId);
    // Everything durable: the journal is emptied.
    expect(fs.statSync(journal).size).toBe(0);

    // Clean up for the next tests: clear and acknowledge.
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.1)));
    svc.acknowledge(suite.fx.users.operator, m.id, null);
    expect(marginPoint(svc).state).toBe("normal");
    await svc.stop();
  });

  it("role matrix and tenancy: viewer cannot acknowledge, operator cannot take out of service, other tenant gets 404", async () => {
    const clock = new FakeClock(T0 + 3600_000);
    const { svc } = await start(clock, tempJournal());
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.45)));
    const m = marginPoint(svc);
    expect(() => svc.acknowledge(suite.fx.users.viewer, m.id, "x")).toThrow(ForbiddenError);
    expect(() => svc.removeFromService(suite.fx.users.operator, m.id, "work")).toThrow(ForbiddenError);
    expect(() => svc.acknowledge(suite.fx.outsider, m.id, "x")).toThrow(NotFoundError);
    expect(svc.acknowledge(suite.fx.users.operator, m.id, null).state).toBe("acknowledged");
    expect(() => svc.acknowledge(suite.fx.users.operator, m.id, null)).toThrow(IllegalTransitionError);
    expect(svc.removeFromService(suite.fx.users.engineer, m.id, "transmitter swap").state).toBe("out-of-service");
    expect(svc.returnToService(suite.fx.users.engineer, m.id).state).toBe("unacknowledged");
    expect(() => svc.shelve(suite.fx.users.operator, m.id, 121, "too long")).toThrow(ValidationError);
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.1)));
    svc.acknowledge(suite.fx.users.operator, m.id, "back to normal");
    await svc.flush();
    await svc.stop();
  });

  it("an urgent `unstable` alarm suppresses the others and needs a comment to acknowledge", async () => {
    const clock = new FakeClock(T0 + 2 * 3600_000);
    const { svc } = await start(clock, tempJournal());
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(1.3)));
    const all = svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId });
    const unstable = all.find((a) => a.condition === "unstable")!;
    expect(unstable.state).toBe("unacknowledged");
    expect(unstable.priority).toBe("urgent");
    const margin = all.find((a) => a.condition === "margin")!;
    expect(margin.state).toBe("suppressed-by-design");
    expect(margin.suppressedReason).toMatch(/unstable/);
    expect(() => svc.acknowledge(suite.fx.users.operator, unstable.id, "")).toThrow(/comment/);
    svc.acknowledge(suite.fx.users.operator, unstable.id, "board operator reduced gain per MOC-221");
    svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.1)));
    const after = svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId });
    expect(after.find((a) => a.condition === "unstable")!.state).toBe("normal");
    expect(after.find((a) => a.condition === "margin")!.state).toBe("normal");
    await svc.flush();
    await svc.stop();
  });

  it("shelve expiry re-announces a still-active alarm; a restart keeps states and the shelve's expiry", async () => {
    const clock = new FakeClock(T0 + 3 * 3600_000);
    const journal = tempJournal();
    const first = await start(clock, journal);
    first.svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.45)));
    const m = marginPoint(first.svc);
    const shelved = first.svc.shelve(suite.fx.users.operator, m.id, 30, "valve stroking under permit 77");
    expect(shelved.state).toBe("shelved");
    const until = shelved.shelvedUntil;
    await first.svc.stop();

    await clock.advance(10 * 60_000);
    const second = await start(clock, journal);
    const again = second.svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId });
    expect(again.find((a) => a.condition === "margin")).toMatchObject({ state: "shelved", shelvedUntil: until, active: true });
    const announced: AlarmDto[] = [];
    second.ctx.bus.on("alarm:changed", (a) => announced.push(a));
    await clock.advance(19 * 60_000);
    expect(marginPoint(second.svc).state).toBe("shelved");
    await clock.advance(60_000);
    expect(marginPoint(second.svc).state).toBe("unacknowledged");
    expect(announced.map((a) => a.state)).toContain("unacknowledged");
    await second.svc.flush();
    const ev = (await suite.db.sequelize.query("SELECT kind, user_id, comment FROM alarm_events WHERE alarm_id = ? ORDER BY journal_id DESC LIMIT 2", {
      replacements: [m.id],
      type: QueryTypes.SELECT,
    })) as { kind: string; user_id: number | null; comment: string | null }[];
    expect(ev[0]).toMatchObject({ kind: "shelve-expired", user_id: null });
    expect(ev[1]).toMatchObject({ kind: "shelve", user_id: suite.fx.users.operator.userId, comment: "valve stroking under permit 77" });
    // leave things normal
    second.svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.1)));
    for (const a of second.svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId })) if (a.state === "rtn-unacknowledged") second.svc.acknowledge(suite.fx.users.operator, a.id, null);
    await second.svc.flush();
    await second.svc.stop();
  });

  it("a journal entry not yet in MariaDB at a crash is replayed at the next start (idempotently)", async () => {
    const clock = new FakeClock(T0 + 5 * 3600_000);
    const journal = tempJournal();
    const first = await start(clock, journal);
    first.svc.writer.stop(); // simulate a crash before the database write
    first.svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.6)));
    const m = marginPoint(first.svc);
    expect(m.priority).toBe("high");
    const lines = fs.readFileSync(journal, "utf8").trim().split("\n");
    expect(lines.length).toBeGreaterThan(0);
    expect((await dbRow(m.id)).state).toBe("normal");
    // A duplicate line (a second crash mid-replay) must not write twice.
    fs.appendFileSync(journal, lines[0] + "\n");
    const second = await start(clock, journal);
    expect(marginPoint(second.svc).state).toBe("unacknowledged");
    await second.svc.flush();
    expect(await dbRow(m.id)).toMatchObject({ state: "unacknowledged", priority: "high" });
    const [{ n }] = (await suite.db.sequelize.query("SELECT COUNT(*) AS n FROM alarm_events WHERE alarm_id = ? AND kind = 'activate'", {
      replacements: [m.id],
      type: QueryTypes.SELECT,
    })) as { n: number }[] as [{ n: number }];
    expect(Number(n)).toBe(4); // one per activation across this file: 0.42, 0.45, 0.45 and this one
    second.svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(0.1)));
    second.svc.acknowledge(suite.fx.users.operator, m.id, null);
    await second.svc.flush();
    await second.svc.stop();
    first.svc.notifier.stop();
  });
});

describe("configuration changes without a restart", () => {
  it("a loop added later gets its alarm points when the loop configuration changes", async () => {
    const clock = new FakeClock(T0 + 8 * 3600_000);
    const { svc, ctx } = await start(clock, tempJournal());
    const [id] = (await suite.db.sequelize.query(
      `INSERT INTO loops (tenant_id, site_id, area_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s,
        gain_value, ti_value, estimation_period_s, baseline_time_constant_s, created_at, updated_at)
       VALUES (?,?,?,'TIC-140','tic-140','temperature','degC',0,200,2,2,1,60,2,120,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))`,
      { replacements: [suite.fx.tenantId, suite.fx.siteId, suite.fx.areaId] },
    )) as unknown as [number];
    expect(svc.list(suite.fx.tenantId, { loopId: Number(id) })).toHaveLength(0);
    ctx.bus.emit("loop:config-changed", Number(id));
    for (let i = 0; i < 100 && svc.list(suite.fx.tenantId, { loopId: Number(id) }).length === 0; i++) await new Promise((r) => setTimeout(r, 20));
    const pts = svc.list(suite.fx.tenantId, { loopId: Number(id) });
    expect(pts.map((a) => a.loopTag)).toEqual(["TIC-140", "TIC-140", "TIC-140"]); // unstable, margin, rim-forecast
    svc.onTrackerUpdate(loopState(Number(id), suite.fx.tenantId, clock.now(), polesWithDecay(0.45), { estimationPeriodS: 2 }));
    const tic = svc.list(suite.fx.tenantId, { loopId: Number(id) }).find((a) => a.condition === "margin")!;
    expect(tic.state).toBe("unacknowledged");
    // leave it normal (an unacknowledged alarm would escalate when a later test starts the service)
    svc.onTrackerUpdate(loopState(Number(id), suite.fx.tenantId, clock.now(), polesWithDecay(0.1), { estimationPeriodS: 2 }));
    svc.acknowledge(suite.fx.users.operator, tic.id, null);
    await svc.flush();
    await svc.stop();
  });
});

describe("notifications by e-mail", () => {
  let mail: MailService;

  it("sends to the SMTP sink, rate-limits repeats, always sends a higher priority and escalates after the delay", async () => {
    const clock = new FakeClock(T0 + 10 * 3600_000);
    const ctx = testContext(clock);
    mail = await startMail(ctx, { sinkPort: 0 });
    ctx.services.set("mail", mail);
    await suite.db.sequelize.query(
      "INSERT INTO notification_rules (tenant_id, area_id, name, recipients, min_priority, escalation_minutes, repeat_minutes, enabled, created_at, updated_at) VALUES (?,?,?,?,?,?,?,1,UTC_TIMESTAMP(3),UTC_TIMESTAMP(3))",
      { replacements: [suite.fx.tenantId, suite.fx.areaId, "Reactor board", JSON.stringify(["board@harrowgate.example", "shift.lead@harrowgate.example"]), "low", 5, 60] },
    );
    const { svc } = await start(clock, tempJournal(), ctx);
    const upd = (d: number) => svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(d)));

    upd(0.4); // low margin alarm: first message
    await svc.notifier.idle();
    const [first] = await mail.waitForMessages(1);
    const m = marginPoint(svc);
    expect(first!.to.sort()).toEqual(["board@harrowgate.example", "shift.lead@harrowgate.example"]);
    expect(first!.subject).toBe("[Rimguard] LOW (3) margin on FIC-101");
    expect(first!.text).toContain(`/alarms/${m.id}`);
    expect(first!.text).toContain("not a safety system");
    expect(first!.text).toMatch(/decay ratio 0\.4\d* against the low-priority level 0\.35 \(ζ 0\.\d+/); // non-ASCII (ζ) survives the SMTP round trip
    expect(first!.headers["x-rimguard-kind"]).toBe("initial");

    await clock.advance(60_000);
    upd(0.1);
    svc.acknowledge(suite.fx.users.operator, m.id, null); // settles: no escalation for the first activation
    await clock.advance(60_000);
    upd(0.4); // same loop again within the 60 min repeat interval: rate-limited
    await svc.notifier.idle();
    await settle();
    expect(mail.outbox()).toHaveLength(1);

    await clock.advance(60_000);
    upd(0.6); // higher priority: always sends
    await svc.notifier.idle();
    await mail.waitForMessages(2);
    expect(mail.outbox()[1]!.subject).toBe("[Rimguard] HIGH (2) margin on FIC-101");

    await clock.advance(4 * 60_000 + 59_000);
    await svc.notifier.idle();
    await settle();
    expect(mail.outbox()).toHaveLength(2);
    await clock.advance(1000); // 5 min after the last announcement, still unacknowledged
    await svc.notifier.idle();
    const all = await mail.waitForMessages(3);
    expect(all[2]!.subject).toMatch(/^\[Rimguard\] ESCALATION - still unacknowledged - HIGH \(2\) margin on FIC-101$/);
    expect(all[2]!.text).toContain("still unacknowledged after 5 minutes");
    expect(all[2]!.headers["x-rimguard-kind"]).toBe("escalation");

    const sent = (await suite.db.sequelize.query("SELECT kind, status FROM notifications_sent WHERE alarm_id = ? ORDER BY id", { replacements: [m.id], type: QueryTypes.SELECT })) as { kind: string; status: string }[];
    expect(sent.map((s) => `${s.kind}:${s.status}`)).toEqual([
      "initial:sent", "initial:sent",
      "initial:rate-limited", "initial:rate-limited",
      "initial:sent", "initial:sent",
      "escalation:sent", "escalation:sent",
    ]);
    await svc.flush();
    await svc.stop();
    await mail.stop();
  });

  it("after a restart, a still-unacknowledged alarm escalates on time, and only once", async () => {
    const clock = new FakeClock(T0 + 12 * 3600_000);
    const journal = tempJournal();
    const ctx1 = testContext(clock);
    const mail1 = await startMail(ctx1, { sinkPort: 0 });
    ctx1.services.set("mail", mail1);
    const a = await start(clock, journal, ctx1);
    const upd = (svc: AlarmService, d: number) => svc.onTrackerUpdate(loopState(suite.fx.loopId, suite.fx.tenantId, clock.now(), polesWithDecay(d)));
    const m = marginPoint(a.svc);
    // Bring the margin alarm back to normal, then announce it afresh (12 h after the last message).
    upd(a.svc, 0.1);
    if (marginPoint(a.svc).state === "rtn-unacknowledged") a.svc.acknowledge(suite.fx.users.operator, m.id, null);
    upd(a.svc, 0.4);
    await a.svc.notifier.idle();
    await mail1.waitForMessages(1);
    expect(mail1.outbox()[0]!.headers["x-rimguard-kind"]).toBe("initial");
    await clock.advance(2 * 60_000);
    await a.svc.stop();
    await mail1.stop();

    const ctx2 = testContext(clock);
    const mail2 = await startMail(ctx2, { sinkPort: 0 });
    ctx2.services.set("mail", mail2);
    const b = await start(clock, journal, ctx2);
    expect(marginPoint(b.svc).state).toBe("unacknowledged");
    await clock.advance(2 * 60_000 + 59_000);
    await b.svc.notifier.idle();
    expect(mail2.outbox()).toHaveLength(0);
    await clock.advance(1000); // 5 min after the announcement
    await b.svc.notifier.idle();
    const [esc] = await mail2.waitForMessages(1);
    expect(esc!.headers["x-rimguard-kind"]).toBe("escalation");
    await clock.advance(30 * 60_000);
    await b.svc.notifier.idle();
    expect(mail2.outbox()).toHaveLength(1);
    await b.svc.flush();
    await b.svc.stop();

    // A third start finds the escalation in notifications_sent and does not repeat it, and keeps
    // the repeat limit of the loop: a new activation within the interval is not mailed again.
    const ctx3 = testContext(clock);
    const mail3 = await startMail(ctx3, { sinkPort: 0 });
    ctx3.services.set("mail", mail3);
    const c = await start(clock, journal, ctx3);
    await clock.advance(10 * 60_000);
    await c.svc.notifier.idle();
    expect(mail3.outbox()).toHaveLength(0);
    upd(c.svc, 0.1);
    c.svc.acknowledge(suite.fx.users.operator, m.id, null);
    upd(c.svc, 0.4); // 44 min after the last initial message, repeat interval 60 min
    await c.svc.notifier.idle();
    await settle();
    expect(mail3.outbox()).toHaveLength(0);
    await c.svc.flush();
    await c.svc.stop();
    await mail2.stop();
    await mail3.stop();
  });
});

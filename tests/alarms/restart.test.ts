/**
 * A restart must not clear or re-announce anything (ISA-18.2: an alarm returns to normal only on
 * evidence). The alarm service is restored from MariaDB and its journal after a simulated crash
 * with an acknowledged active alarm and a shelved active alarm; until the loop's tracker gives a
 * trusted estimate again (learning, or `tracking` without any poles yet as a tracker restored from
 * a checkpoint reports at first) the alarms keep their state; evidence of alarm keeps them without
 * a new announcement; normal evidence clears them only after the policy's off-delay.
 */
import { QueryTypes } from "sequelize";
import { describe, expect, it } from "vitest";
import type { AlarmDto, LoopStateDto } from "@/lib/domain/types";
import type { AlarmService } from "@/server/alarms/service";
import type { ServerContext } from "@/server/context";
import { FakeClock, loopState, pole, polesWithDecay, startAlarmService, tempJournal, setUpAlarmDb } from "./helpers";

const T0 = Date.UTC(2026, 10, 20, 22, 0, 0);
const OFF_DELAY_S = 3600;
const suite = setUpAlarmDb("alarmrestart", { onDelayS: 60, offDelayS: OFF_DELAY_S, advisoryOnDelayS: 60, shelveMaxMinutes: 480 });


const start = (clock: FakeClock, journalPath: string, ctx?: ServerContext) => startAlarmService(suite.db.sequelize, clock, journalPath, ctx);
const byCondition = (svc: AlarmService, c: string, loopId = suite.fx.loopId): AlarmDto => svc.list(suite.fx.tenantId, { loopId }).find((a) => a.condition === c)!;
/** An oscillating pair at decay ratio 0.6 (margin, high). */
const inAlarm = (at: number, loopId = suite.fx.loopId) => loopState(loopId, suite.fx.tenantId, at, polesWithDecay(0.6));
const normal = (at: number, loopId = suite.fx.loopId) => loopState(loopId, suite.fx.tenantId, at, polesWithDecay(0.05));
const noEstimate = (at: number, over: Partial<LoopStateDto>, loopId = suite.fx.loopId): LoopStateDto =>
  ({ ...loopState(loopId, suite.fx.tenantId, at, [pole(0, 0)]), modelPoles: [], dataPoles: [], spectralRadius: null, rimDistance: null, juryStable: null, ...over });
/** A second loop of the tenant's site (raw INSERT of the columns the alarm service reads), for a second alarm at once. */
async function insertSecondLoop(tag: string): Promise<number> {
  const [id] = (await suite.db.sequelize.query(
    `INSERT INTO loops (tenant_id, site_id, area_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s,
      gain_value, ti_value, estimation_period_s, created_at, updated_at)
     VALUES (?,?,?,?,?, 'flow', 'm3/h', 0, 100, 1, 1, 0.8, 12, 1, UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))`,
    { replacements: [suite.fx.tenantId, suite.fx.siteId, suite.fx.areaId, tag, tag.toLowerCase()] },
  )) as unknown as [number];
  return Number(id);
}

describe("alarms across a restart", () => {
  it("keep acknowledged and shelved alarms active until trusted evidence has lasted the off-delay", async () => {
    const journal = tempJournal();
    const other = await insertSecondLoop("FIC-102");
    const both = (f: (at: number, loopId: number) => LoopStateDto, at: number) => [f(at, suite.fx.loopId), f(at, other)];
    // --- before the crash: margin of one loop active and acknowledged, margin of the other active and shelved.
    const c1 = new FakeClock(T0);
    const first = await start(c1, journal);
    for (let i = 0; i <= 3; i++) {
      for (const s of both(inAlarm, c1.now())) first.svc.onTrackerUpdate(s);
      await c1.advance(30_000);
    }
    const margin = byCondition(first.svc, "margin");
    const shelvedOne = byCondition(first.svc, "margin", other);
    expect(margin).toMatchObject({ state: "unacknowledged", active: true, priority: "high" });
    expect(shelvedOne).toMatchObject({ state: "unacknowledged", active: true });
    first.svc.acknowledge(suite.fx.users.operator, margin.id, null);
    await first.svc.flush(); // the acknowledgement reaches MariaDB...
    first.svc.writer.stop(); // ...the shelve only the journal: then the process dies (no stop()).
    first.svc.shelve(suite.fx.users.operator, shelvedOne.id, 300, "valve overhaul under permit 41");
    first.svc.notifier.stop();

    // --- after the restart.
    const c2 = new FakeClock(c1.now() + 5_000);
    const second = await start(c2, journal);
    const events: AlarmDto[] = [];
    second.ctx.bus.on("alarm:changed", (a) => events.push(a));
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "acknowledged", active: true, priority: "high" });
    expect(byCondition(second.svc, "margin", other)).toMatchObject({ state: "shelved", active: true });

    // Untrusted or unknown estimates for two hours (longer than the off-delay): nothing moves.
    const untrusted: Partial<LoopStateDto>[] = [
      { trackerState: "tracking" }, // restored from a checkpoint, no poles yet: "spectral radius unknown"
      { trackerState: "learning", stateReason: "restored checkpoint refused" },
      { trackerState: "low-excitation" },
      { trackerState: "stale" },
    ];
    for (let k = 0; k < 120; k++) {
      for (const id of [suite.fx.loopId, other]) second.svc.onTrackerUpdate(noEstimate(c2.now(), untrusted[k % untrusted.length]!, id));
      await c2.advance(60_000);
    }
    for (const s of both(normal, c2.now())) second.svc.onTrackerUpdate({ ...s, trackerState: "learning" }); // poles, but not trusted yet
    expect(events).toEqual([]);
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "acknowledged", active: true, priority: "high" });
    expect(byCondition(second.svc, "margin", other)).toMatchObject({ state: "shelved", active: true });

    // Trusted evidence that the conditions persist: still in effect, nothing announced again.
    for (let k = 0; k < 5; k++) {
      for (const s of both(inAlarm, c2.now())) second.svc.onTrackerUpdate(s);
      await c2.advance(30_000);
    }
    expect(events).toEqual([]);
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "acknowledged", active: true });

    // Trusted normal evidence: the alarms clear only once it has lasted the off-delay.
    const clearFrom = c2.now();
    while (c2.now() - clearFrom < (OFF_DELAY_S - 60) * 1000) {
      for (const s of both(normal, c2.now())) second.svc.onTrackerUpdate(s);
      await c2.advance(60_000);
    }
    expect(events).toEqual([]);
    expect(byCondition(second.svc, "margin").active).toBe(true);
    for (let k = 0; k < 3; k++) {
      for (const s of both(normal, c2.now())) second.svc.onTrackerUpdate(s);
      await c2.advance(60_000);
    }
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "normal", active: false });
    expect(byCondition(second.svc, "margin", other)).toMatchObject({ state: "shelved", active: false });
    expect(events.every((e) => e.state !== "unacknowledged")).toBe(true);

    await second.svc.flush();
    const rows = (await suite.db.sequelize.query("SELECT loop_id, `condition`, state, active FROM alarms WHERE loop_id IN (?) AND `condition` = 'margin'", {
      replacements: [[suite.fx.loopId, other]],
      type: QueryTypes.SELECT,
    })) as { loop_id: number; condition: string; state: string; active: number }[];
    expect(rows.find((r) => r.loop_id === suite.fx.loopId)).toMatchObject({ state: "normal", active: 0 });
    expect(rows.find((r) => r.loop_id === other)).toMatchObject({ state: "shelved", active: 0 });
    await second.svc.stop();
  });

  it("a loop that has given a trusted estimate since the start is suppressed by design as before when its tracker stops trusting", async () => {
    const c = new FakeClock(T0 + 24 * 3600_000);
    const { svc } = await start(c, tempJournal());
    svc.onTrackerUpdate(normal(c.now()));
    svc.onTrackerUpdate(noEstimate(c.now(), { trackerState: "manual" }));
    expect(byCondition(svc, "margin").state).toBe("suppressed-by-design");
    svc.onTrackerUpdate(normal(c.now()));
    await svc.flush();
    await svc.stop();
  });
});

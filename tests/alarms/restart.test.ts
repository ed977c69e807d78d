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
const suite = setUpAlarmDb("alarmrestart", { onDelayS: 60, offDelayS: OFF_DELAY_S, advisoryOnDelayS: 60, shelveMaxMinutes: 480, enabled: { sluggish: true } }); // `sluggish` is off by default (a work-list finding)


const start = (clock: FakeClock, journalPath: string, ctx?: ServerContext) => startAlarmService(suite.db.sequelize, clock, journalPath, ctx);
const byCondition = (svc: AlarmService, c: string): AlarmDto => svc.list(suite.fx.tenantId, { loopId: suite.fx.loopId }).find((a) => a.condition === c)!;
/** An oscillating pair at decay ratio 0.6 (margin, high) and a slow real pole (sluggish). */
const inAlarm = (at: number) => loopState(suite.fx.loopId, suite.fx.tenantId, at, [...polesWithDecay(0.6), pole(0.998, 0)]);
const normal = (at: number) => loopState(suite.fx.loopId, suite.fx.tenantId, at, polesWithDecay(0.05));
const noEstimate = (at: number, over: Partial<LoopStateDto>): LoopStateDto =>
  ({ ...loopState(suite.fx.loopId, suite.fx.tenantId, at, [pole(0, 0)]), modelPoles: [], dataPoles: [], spectralRadius: null, rimDistance: null, juryStable: null, ...over });

describe("alarms across a restart", () => {
  it("keep acknowledged and shelved alarms active until trusted evidence has lasted the off-delay", async () => {
    const journal = tempJournal();
    // --- before the crash: margin active and acknowledged, sluggish active and shelved.
    const c1 = new FakeClock(T0);
    const first = await start(c1, journal);
    for (let i = 0; i <= 3; i++) {
      first.svc.onTrackerUpdate(inAlarm(c1.now()));
      await c1.advance(30_000);
    }
    const margin = byCondition(first.svc, "margin");
    const sluggish = byCondition(first.svc, "sluggish");
    expect(margin).toMatchObject({ state: "unacknowledged", active: true, priority: "high" });
    expect(sluggish).toMatchObject({ state: "unacknowledged", active: true });
    first.svc.acknowledge(suite.fx.users.operator, margin.id, null);
    await first.svc.flush(); // the acknowledgement reaches MariaDB...
    first.svc.writer.stop(); // ...the shelve only the journal: then the process dies (no stop()).
    first.svc.shelve(suite.fx.users.operator, sluggish.id, 300, "valve overhaul under permit 41");
    first.svc.notifier.stop();

    // --- after the restart.
    const c2 = new FakeClock(c1.now() + 5_000);
    const second = await start(c2, journal);
    const events: AlarmDto[] = [];
    second.ctx.bus.on("alarm:changed", (a) => events.push(a));
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "acknowledged", active: true, priority: "high" });
    expect(byCondition(second.svc, "sluggish")).toMatchObject({ state: "shelved", active: true });

    // Untrusted or unknown estimates for two hours (longer than the off-delay): nothing moves.
    const untrusted: Partial<LoopStateDto>[] = [
      { trackerState: "tracking" }, // restored from a checkpoint, no poles yet: "spectral radius unknown"
      { trackerState: "learning", stateReason: "restored checkpoint refused" },
      { trackerState: "low-excitation" },
      { trackerState: "stale" },
    ];
    for (let k = 0; k < 120; k++) {
      second.svc.onTrackerUpdate(noEstimate(c2.now(), untrusted[k % untrusted.length]!));
      await c2.advance(60_000);
    }
    second.svc.onTrackerUpdate({ ...normal(c2.now()), trackerState: "learning" }); // poles, but not trusted yet
    expect(events).toEqual([]);
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "acknowledged", active: true, priority: "high" });
    expect(byCondition(second.svc, "sluggish")).toMatchObject({ state: "shelved", active: true });

    // Trusted evidence that the conditions persist: still in effect, nothing announced again.
    for (let k = 0; k < 5; k++) {
      second.svc.onTrackerUpdate(inAlarm(c2.now()));
      await c2.advance(30_000);
    }
    expect(events).toEqual([]);
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "acknowledged", active: true });

    // Trusted normal evidence: the alarms clear only once it has lasted the off-delay.
    const clearFrom = c2.now();
    while (c2.now() - clearFrom < (OFF_DELAY_S - 60) * 1000) {
      second.svc.onTrackerUpdate(normal(c2.now()));
      await c2.advance(60_000);
    }
    expect(events).toEqual([]);
    expect(byCondition(second.svc, "margin").active).toBe(true);
    for (let k = 0; k < 3; k++) {
      second.svc.onTrackerUpdate(normal(c2.now()));
      await c2.advance(60_000);
    }
    expect(byCondition(second.svc, "margin")).toMatchObject({ state: "normal", active: false });
    expect(byCondition(second.svc, "sluggish")).toMatchObject({ state: "shelved", active: false });
    expect(events.every((e) => e.state !== "unacknowledged")).toBe(true);

    await second.svc.flush();
    const rows = (await suite.db.sequelize.query("SELECT `condition`, state, active FROM alarms WHERE loop_id = ? ORDER BY `condition`", {
      replacements: [suite.fx.loopId],
      type: QueryTypes.SELECT,
    })) as { condition: string; state: string; active: number }[];
    expect(rows.find((r) => r.condition === "margin")).toMatchObject({ state: "normal", active: 0 });
    expect(rows.find((r) => r.condition === "sluggish")).toMatchObject({ state: "shelved", active: 0 });
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

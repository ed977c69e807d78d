/**
 * End to end on simulated plants, in-process and sped up: simulator -> loop tracker -> bus ->
 * alarm service (MariaDB-backed), with the demo tenant policy (decay ratio 0.35 / 0.5, 30 s
 * on-delay). The truth comes from the simulator's own closed-loop state matrix (its eigenvalues),
 * which the product never sees.
 */
import path from "node:path";
import { describe, expect, it } from "vitest";
import { DEMO_LOOPS, DEMO_PLANTS, DEMO_TENANT_POLICY } from "@/lib/seed/demo";
import type { AlarmDto } from "@/lib/domain/types";
import { AlarmService } from "@/server/alarms/service";
import { TrackerRegistry } from "@/server/tracking/registry";
import type { LoopConfig } from "@/server/tracking/types";
import { buildFleet } from "@/simulators/fleet";
import { LoopSim, trueClosedLoopPoles } from "@/simulators/loop-sim";
import { activitySchema, controllerSpecSchema, loadScenario } from "@/simulators/scenario";
import { trackerConfigFor } from "../tracking/helpers";
import { demoTrackerConfig } from "../tracking/demo-harness";
import { FakeClock, tempJournal, testContext, setUpAlarmDb } from "./helpers";

const T0 = Date.UTC(2026, 6, 1, 12, 0, 0);
const suite = setUpAlarmDb("alarmsim", DEMO_TENANT_POLICY);


async function insertLoop(tag: string, estimationPeriodS: number, baselineS: number | null): Promise<number> {
  const [id] = (await suite.db.sequelize.query(
    `INSERT INTO loops (tenant_id, site_id, area_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s,
      gain_value, ti_value, estimation_period_s, baseline_time_constant_s, created_at, updated_at)
     VALUES (?,?,?,?,?, 'flow', 'u', 0, 100, 1, 1, 1, 10, ?, ?, UTC_TIMESTAMP(3), UTC_TIMESTAMP(3))`,
    { replacements: [suite.fx.tenantId, suite.fx.siteId, suite.fx.areaId, tag, tag.toLowerCase().replace(/[^a-z0-9]+/g, "-"), estimationPeriodS, baselineS] },
  )) as unknown as [number];
  return Number(id);
}

/** Step every simulator by one telemetry period in simulated-time order, feeding the registry. */
function run(sims: { sim: LoopSim; id: number }[], reg: TrackerRegistry, clock: FakeClock, seconds: number, each?: (tS: number) => void): void {
  const next = sims.map(() => 0);
  const end = seconds;
  for (;;) {
    let i = -1;
    for (let j = 0; j < sims.length; j++) if (next[j]! < end && (i < 0 || next[j]! < next[i]!)) i = j;
    if (i < 0) break;
    const { sim, id } = sims[i]!;
    const s = sim.step();
    next[i] = next[i]! + sim.config.telemetryPeriodS;
    if (!s) continue;
    clock.t = T0 + Math.round(next[i]! * 1000);
    reg.push(id, [{ t: clock.t, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode }], clock.t);
    each?.(next[i]!);
  }
}

describe("alarms on simulated plants", () => {
  it("gain creep past the critical gain: a `margin` alarm is raised before the loop goes unstable", async () => {
    const sc = await loadScenario(path.join(import.meta.dirname, "../../simulators/scenarios/gain-creep.json"));
    // The stored scenario stops short of the limit; here the creep goes 10 % past the loop's own
    // critical gain (the simulator resolves `toHeadroom` against its closed-loop state matrix).
    const creep = { kind: "gain-creep" as const, startS: 600, durationS: 1800, toHeadroom: 1.1 };
    const [sim] = buildFleet({ scenario: { ...sc, loops: sc.loops.map((l) => ({ ...l, drift: [creep] })) }, seed: sc.seed ?? 1 });
    const clock = new FakeClock(T0);
    const ctx = testContext(clock);
    const svc = await AlarmService.start(ctx, { sequelize: suite.db.sequelize, journalPath: tempJournal(), quiet: true });
    const cfg: LoopConfig = { ...trackerConfigFor(sim!, suite.fx.loopId), tenantId: suite.fx.tenantId, siteId: suite.fx.siteId };
    const reg = new TrackerRegistry(ctx, [cfg]);
    const critical = sim!.criticalGainFactor();
    let firstMargin: { t: number; gain: number; trueRadius: number } | null = null;
    let firstUnstable: number | null = null;
    let trueUnstableAt: number | null = null;
    ctx.bus.on("alarm:changed", (a: AlarmDto) => {
      const tS = (clock.now() - T0) / 1000;
      const trueRadius = Math.max(...trueClosedLoopPoles(sim!).map((z) => Math.hypot(z.re, z.im)));
      if (a.condition === "margin" && a.state === "unacknowledged" && !firstMargin) firstMargin = { t: tS, gain: sim!.gainFactor(), trueRadius };
      if (a.condition === "unstable" && a.state === "unacknowledged" && firstUnstable == null) firstUnstable = tS;
    });
    run([{ sim: sim!, id: suite.fx.loopId }], reg, clock, 600 + 1800 + 300, (tS) => {
      if (trueUnstableAt == null && sim!.gainFactor() >= critical) trueUnstableAt = tS;
    });
    if (process.env.RG_DEBUG) console.log("gain-creep", JSON.stringify({ firstMargin, firstUnstable, trueUnstableAt, critical }));
    expect(firstMargin, "no margin alarm during the gain creep").not.toBeNull();
    const fm = firstMargin as unknown as { t: number; gain: number; trueRadius: number };
    // Raised while the true loop is still stable, after the creep began.
    expect(fm.t).toBeGreaterThan(600);
    expect(fm.gain).toBeLessThan(critical);
    expect(fm.trueRadius).toBeLessThan(1);
    expect(trueUnstableAt, "the creep must reach the critical gain in this test").not.toBeNull();
    expect(fm.t).toBeLessThan(trueUnstableAt as unknown as number);
    if (firstUnstable != null) expect(fm.t).toBeLessThan(firstUnstable);
    await svc.flush();
    await svc.stop();
  });

  /** Runs the healthy demo loops for one simulated hour; the alarms raised, by condition. */
  async function healthyHour(): Promise<{ raised: { condition: string; text: string }[] }> {
    const healthy = DEMO_LOOPS.filter((l) => DEMO_PLANTS[l.tag]?.drift === null);
    expect(healthy.length).toBeGreaterThanOrEqual(5);
    const sims: { sim: LoopSim; id: number }[] = [];
    const configs: LoopConfig[] = [];
    for (const [i, l] of healthy.entries()) {
      const p = DEMO_PLANTS[l.tag]!;
      const id = await insertLoop(`H-${l.tag}`, l.estimationPeriodS, l.baselineTimeConstantS);
      const sim = new LoopSim({
        tenantSlug: p.tenantSlug,
        siteSlug: p.siteSlug,
        tag: l.tag,
        telemetryPeriodS: l.telemetryPeriodS,
        controllerPeriodS: l.controllerPeriodS,
        plant: p.plant,
        controller: controllerSpecSchema.parse(p.controller),
        pvRange: [l.pvLo, l.pvHi],
        mvRange: [0, 100],
        mvLimitsPct: [0, 100],
        spPct: p.spPct,
        mvPct: p.mvPct,
        activity: activitySchema.parse({}),
        drift: [],
        seed: 9100 + i,
      });
      sims.push({ sim, id });
      configs.push(demoTrackerConfig(l.tag, id, { tenantId: suite.fx.tenantId, siteId: suite.fx.siteId, tag: `H-${l.tag}` }));
    }
    const clock = new FakeClock(T0);
    const ctx = testContext(clock);
    const svc = await AlarmService.start(ctx, { sequelize: suite.db.sequelize, journalPath: tempJournal(), quiet: true });
    const reg = new TrackerRegistry(ctx, configs);
    expect(reg.rejected.size).toBe(0);
    const raised: { condition: string; text: string }[] = [];
    let updates = 0;
    ctx.bus.on("tracker:update", () => updates++);
    ctx.bus.on("alarm:changed", (a: AlarmDto) => {
      if (a.state === "unacknowledged")
        raised.push({ condition: a.condition, text: `${a.loopTag} ${a.condition} ${a.priority} at ${((clock.now() - T0) / 1000).toFixed(0)} s: ${a.message}` });
    });
    run(sims, reg, clock, 3600);
    expect(updates).toBeGreaterThan(1000);
    const tracked = reg.states().filter((s) => s.trackerState === "tracking").length;
    expect(tracked, "most healthy loops should be tracking after an hour").toBeGreaterThan(0);
    await svc.flush();
    await svc.stop();
    return { raised };
  }
  let hour: Promise<{ raised: { condition: string; text: string }[] }> | null = null;
  const runHour = () => (hour ??= healthyHour());

  // Formerly a known defect (the plant gain estimate collapsed at low excitation, leaving an
  // uncancelled closed-loop pole near z = 1); fixed by the tracker's instrumental-variable plant
  // estimator, which holds its estimate while nothing excites it. A slow set-point response is no
  // operator alarm any more (the work list's sluggish-tuning finding, tests/assessment/model-check.test.ts).
  it("the healthy demo loops raise no operator alarm (unstable, margin, rim-forecast) over a sped-up hour", async () => {
    const { raised } = await runHour();
    expect(raised.map((r) => r.text)).toEqual([]);
  }, 300_000);
});

/**
 * The live Harris index needs the loop's dead time (Harris 1989: the first b terms of the error's
 * disturbance response are fixed by the delay b; dead time cannot be told from routine closed-loop
 * data). Checked here: the loader takes the engineer's `loops.dead_time_s` (migration 0131, set
 * through the loop form's path), else the dead time of the latest step test whose proposal was
 * applied to the loop, else none; the live assessor gives a Harris index with a dead time, and
 * null with a caution without one, and a new dead time keeps the window. Recordings: labelled DEV
 * recordings of the benchmark generator (simulators/benchmark) with a known dead time.
 */
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { deadTimeCaution, parseLoopConfig } from "@/lib/assessment";
import type { TenantContext } from "@/lib/domain/types";
import { LiveAssessor } from "@/server/assessment/assessor";
import { loadLiveLoops } from "@/server/assessment/loop-configs";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";
import { createAuthFixture, type AuthFixture } from "../auth/fixture";
import { createTestDatabase, type TestDatabase } from "../setup/db";

let db: TestDatabase;
let fx: AuthFixture;

beforeAll(async () => {
  db = await createTestDatabase("dt", { asDefault: true });
  fx = await createAuthFixture(db.models);
}, 120_000);
afterAll(async () => {
  await db?.drop();
});

describe("the loop's dead time for the live assessment", () => {
  const deadTime = async () => (await loadLiveLoops(db.sequelize, fx.a.loopId)).loops[0]!.config.deadTimeS;
  const stepTest = async (deadTimeS: number, applied: boolean, at: Date) => {
    const st = await db.models.StepTest.create({
      tenantId: fx.a.id, loopId: fx.a.loopId, uploadedBy: null, objectKey: `k/${deadTimeS}`, filename: `bump-${deadTimeS}.csv`,
      periodS: 1, rowCount: 600, result: { continuous: { gainPercent: 1, timeConstantS: 20, deadTimeS } }, createdAt: at,
    });
    // what applying a proposal logs (lib/step-tests/service.ts: diff.stepTest = "#<id> <file>")
    if (applied)
      await db.models.ConfigChange.create({ tenantId: fx.a.id, userId: null, entity: "loop", entityId: fx.a.loopId, diff: { nk: { from: 1, to: 3 }, stepTest: { from: null, to: `#${st.id} bump-${deadTimeS}.csv` } }, reason: "step test", mocReference: null, at });
  };

  it("none configured and no applied step test: null", async () => {
    expect(await deadTime()).toBeNull();
  });

  it("from the latest applied step test; a newer test not applied does not count", async () => {
    await stepTest(2.5, true, new Date(Date.UTC(2026, 10, 1)));
    await stepTest(9, false, new Date(Date.UTC(2026, 10, 5)));
    expect(await deadTime()).toBe(2.5);
    await stepTest(3.5, true, new Date(Date.UTC(2026, 10, 9)));
    expect(await deadTime()).toBe(3.5);
  });

  it("the engineer's value (loop form path, logged) wins over the step test's; cleared, the step test's returns", async () => {
    const { updateLoop } = await import("@/lib/data/admin/loops");
    const ctx: TenantContext = { userId: fx.a.users.engineer.id, email: fx.a.users.engineer.email, name: "engineer", tenantId: fx.a.id, tenantSlug: fx.a.slug, tenantName: fx.a.name, role: "engineer" };
    const dto = await updateLoop(ctx, fx.a.loopId, { deadTimeS: 4, reason: "dead time from the valve bump test" });
    expect(dto.deadTimeS).toBe(4);
    expect(await deadTime()).toBe(4);
    await expect(updateLoop(ctx, fx.a.loopId, { deadTimeS: -1, reason: "typo" })).rejects.toThrow(/Dead time/);
    await updateLoop(ctx, fx.a.loopId, { deadTimeS: null, reason: "unknown after the rebuild" });
    expect(await deadTime()).toBe(3.5);
  });

  it("beside the engineer's value the applied step test's rides along for the disagreement caution; without it, none", async () => {
    const { updateLoop } = await import("@/lib/data/admin/loops");
    const ctx: TenantContext = { userId: fx.a.users.engineer.id, email: fx.a.users.engineer.email, name: "engineer", tenantId: fx.a.id, tenantSlug: fx.a.slug, tenantName: fx.a.name, role: "engineer" };
    const config = async () => (await loadLiveLoops(db.sequelize, fx.a.loopId)).loops[0]!.config;
    // no engineer's value: the step test's is the dead time, and nothing rides along
    expect(await config()).toMatchObject({ deadTimeS: 3.5, stepTestDeadTimeS: null });
    await updateLoop(ctx, fx.a.loopId, { deadTimeS: 1.5, reason: "transport delay from the drawing" });
    const c = await config();
    expect(c).toMatchObject({ deadTimeS: 1.5, stepTestDeadTimeS: 3.5 });
    expect(deadTimeCaution(c)).toMatch(/\(1\.5 s\) is well under .*\(3\.5 s\)/);
    await updateLoop(ctx, fx.a.loopId, { deadTimeS: null, reason: "back to the step test" });
  });
});

describe("the live Harris index", () => {
  const plan = benchmarkPlan();
  const withDeadTime = plan.filter((p) => p.label === "healthy").map((p) => generateRecording("dev", p.index)).find((r) => r.config.deadTimeS !== undefined)!;

  it("null with a caution without the dead time; a value >= 1 with it, on the same window", () => {
    const { deadTimeS, ...rest } = withDeadTime.config;
    const config = parseLoopConfig(rest);
    // a window long enough that the dead time does not change its decimation (40 dead times fit undecimated)
    const live = new LiveAssessor({ capacity: withDeadTime.samples.length, now: () => 0 });
    live.upsertLoop({ loopId: 1, tenantId: 1, siteId: 1, config });
    const t0 = Date.UTC(2026, 11, 2);
    live.push(1, withDeadTime.samples.map((s) => ({ t: t0 + Math.round(s.t * 1000), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode ?? "auto", ...(s.quality ? { quality: s.quality } : {}) })));
    const without = live.assessNow(1)!;
    expect(without.report.harrisIndex).toBeNull();
    expect(without.report.cautions.join(" ")).toMatch(/dead time/i);
    // the engineer enters the dead time: the window stays (no new sample), the index appears
    live.upsertLoop({ loopId: 1, tenantId: 1, siteId: 1, config: { ...config, deadTimeS: deadTimeS! } });
    const withIt = live.assessNow(1)!;
    expect(withIt.windowSamples).toBe(without.windowSamples);
    // FCOR gives sigma²_y / sigma²_mv >= 1 (Desborough & Harris 1992)
    expect(withIt.report.harrisIndex).not.toBeNull();
    expect(withIt.report.harrisIndex!).toBeGreaterThanOrEqual(1);
    expect(withIt.report.details.harris?.delaySamples).toBeGreaterThanOrEqual(1);
  });
});

/**
 * The model cross-check through the live path: demo loop PIC-1103 (an underdamped headbox pressure
 * loop) under the demo's earlier settings (./headbox-slow-creep.json: its gain creeps toward the rim
 * from the first minute over 4 minutes, set-point moves about every 30 s; invented data; the demo
 * now moves its set point more often, and its routine data read the ringing by themselves) feeds
 * its tracker (server/tracking) and the live assessor (server/assessment), the assessor reading
 * the tracker's LoopAssessment as the pipeline wires it (`modelOf`, `recheckModel` on every `tracker:update`). Seen in the demo before the
 * cross-check: the routine verdict read "healthy" while the tracked model showed a decay ratio
 * near 0.57. The same samples through an assessor without the model show what the routine data
 * alone say. Quarter amplitude (0.25) as the classic limit: Ziegler & Nichols 1942, common practice.
 */
import path from "node:path";
import { describe, expect, it } from "vitest";
import { parseLoopConfig } from "@/lib/assessment";
import { MODEL_SIGMAS, POORLY_DAMPED } from "@/lib/assessment/model-check";
import { modeWithinConfidence } from "@/lib/domain/assessment";
import type { LoopStateDto } from "@/lib/domain/types";
import { DEMO_LOOPS } from "@/lib/seed/demo";
import { LiveAssessor, RECHECK_MIN_MS, type LiveResult } from "@/server/assessment/assessor";
import { demoSimLoops } from "@/simulators/seed-loops";
import { startDemoRun } from "../tracking/demo-harness";

const TAG = "PIC-1103";

function liveConfig() {
  const il = demoSimLoops().find((l) => l.tag === TAG)!;
  const dl = DEMO_LOOPS.find((l) => l.tag === TAG)!;
  const c = il.controller;
  return parseLoopConfig({
    tag: TAG,
    kind: dl.kind,
    pvLo: il.pvRange[0],
    pvHi: il.pvRange[1],
    samplePeriodS: il.telemetryPeriodS,
    controller: { kp: c.kp, ti: c.ti ?? null, td: c.td ?? 0, action: c.action ?? "reverse", mvLo: 0, mvHi: 100, form: c.form ?? "ideal" },
  });
}

describe("PIC-1103 in the demo: routine verdict cross-checked against its tracked model", () => {
  it("reads likely aggressive tuning once its trusted model is poorly damped, where the routine data alone read healthy", async () => {
    const checked: { r: LiveResult; model: LoopStateDto }[] = [];
    const plain: LiveResult[] = [];
    let run: Awaited<ReturnType<typeof startDemoRun>> | null = null;
    const modelOf = (id: number) => run?.registry.get(id)?.current;
    const withModel = new LiveAssessor({ now: () => run!.clock.now(), modelOf, onResult: (r) => checked.push({ r, model: modelOf(r.loopId)! }) });
    const alone = new LiveAssessor({ now: () => run!.clock.now(), onResult: (r) => plain.push(r) });
    run = await startDemoRun({
      scenario: path.join(import.meta.dirname, "headbox-slow-creep.json"),
      tags: [TAG],
      onSamples: (id, samples) => {
        withModel.push(id, samples);
        alone.push(id, samples);
      },
    });
    const id = run.ids.get(TAG)!;
    const live = { loopId: id, tenantId: 1, siteId: 1, config: liveConfig() };
    withModel.upsertLoop(live);
    alone.upsertLoop(live);
    // as the pipeline: every tracker state lets the assessor re-check its latest verdict
    run.bus.on("tracker:update", (s) => withModel.recheckModel(s.loopId));
    run.advanceTo(300, () => {
      withModel.runDue(1e9);
      alone.runDue(1e9);
    });

    // the routine data alone: healthy throughout (the case seen in the demo)
    expect(plain.length).toBeGreaterThanOrEqual(3);
    expect(plain.filter((r) => r.report.diagnosis.label !== "undetermined").every((r) => r.report.diagnosis.label === "healthy")).toBe(true);

    // with the model: the verdict turns once the trusted model rings more than half as high each cycle
    const turned = checked.find((c) => c.r.report.diagnosis.label === "aggressive-tuning");
    expect(turned, checked.map((c) => `${(c.r.at - checked[0]!.r.at) / 1000} s ${c.r.report.diagnosis.label}`).join(", ")).toBeDefined();
    const { r, model } = turned!;
    expect(model.trackerState).toBe("tracking");
    expect(model.polesFrom).toBe("model");
    expect(model.rimUndecided ?? false).toBe(false);
    const judged = modeWithinConfidence(model.oscillation!, MODEL_SIGMAS)!;
    expect(judged.decayRatio).toBeGreaterThan(POORLY_DAMPED);
    // the evidence quotes the tracker's own figures (read from its LoopAssessment, not recomputed)
    expect(r.report.diagnosis.evidence[0]).toContain(`period ${model.oscillation!.periodS.toFixed(1)} s, decay ratio ${judged.decayRatio.toFixed(2)}`);
    expect(r.report.diagnosis.confidence).toBeGreaterThan(0.6);
    // the same window read healthy without the model
    const before = [...plain].reverse().find((p) => p.at <= r.at)!;
    expect(before.report.diagnosis.label).toBe("healthy");
    // re-issues are rate-limited: no two results of one loop closer than RECHECK_MIN_MS unless a run made them
    const times = checked.map((c) => c.r.at);
    const runs = plain.map((p) => p.at);
    for (let k = 1; k < times.length; k++) if (!runs.includes(times[k]!)) expect(times[k]! - times[k - 1]!).toBeGreaterThanOrEqual(RECHECK_MIN_MS);
  }, 120_000);
});

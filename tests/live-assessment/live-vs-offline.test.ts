/**
 * The live service runs the offline command's code on the samples it kept: the same samples give
 * the same assessment (docs/assessment.md, "Live use"). Recordings are labelled DEV recordings of
 * the benchmark generator (simulators/benchmark), fed as telemetry (epoch ms, in batches as the
 * pipeline hands them over) and, separately, straight into `assessLoop` as the `assess` command
 * does after parsing LOOP.json. Also checked: the CPU-budget arithmetic of the schedule (counted
 * window samples, not timed), bounded memory for slow loops, and "not judged yet" with the time needed.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig, type AssessSample } from "@/lib/assessment";
import { findingPhrase } from "@/lib/domain/findings";
import type { SampleDto } from "@/lib/domain/types";
import { FILL_RERUN_FACTOR, FIT_RERUN_FACTOR, LiveAssessor, RERUN_FACTOR, rerunFactor, strideFor } from "@/server/assessment/assessor";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";
import { flowLoopJson, simulateLoop } from "@/tests/assessment/loop-sim";

const T0_MS = Date.UTC(2026, 11, 2, 6, 0, 0);
const WINDOW = 6_000;

function telemetryOf(samples: readonly AssessSample[]): SampleDto[] {
  return samples.map((s) => ({ t: T0_MS + Math.round(s.t * 1000), sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode ?? "auto", ...(s.quality ? { quality: s.quality } : {}) }));
}

function feed(a: LiveAssessor, loopId: number, tele: readonly SampleDto[], batch = 50) {
  for (let i = 0; i < tele.length; i += batch) a.push(loopId, tele.slice(i, i + batch));
}

const plan = benchmarkPlan();
const firstIndex = (label: string) => plan.find((p) => p.label === label)!.index;

describe("live assessment = offline assessment on the same samples", () => {
  for (const label of ["valve-stiction", "aggressive-tuning", "external-disturbance", "healthy", "sluggish-tuning"]) {
    it(`${label}: a DEV recording through the service and through assessLoop`, () => {
      const rec = generateRecording("dev", firstIndex(label));
      const config = parseLoopConfig(rec.config);
      const live = new LiveAssessor({ capacity: WINDOW, now: () => 0 });
      // Widen the window so its span covers the loop's time scale without decimation.
      live.upsertLoop({ loopId: 7, tenantId: 1, siteId: 1, config });
      expect(strideFor(config, WINDOW)).toBe(1);
      const tele = telemetryOf(rec.samples);
      feed(live, 7, tele);
      const got = live.assessNow(7)!;
      // Offline: the good samples the service kept (the last WINDOW of them), times as the export gives them.
      const good = tele.filter((s) => s.quality === undefined || s.quality === "good").slice(-WINDOW);
      const offline = assessLoop(good.map((s) => ({ t: s.t / 1000, sp: s.sp, pv: s.pv, mv: s.mv, mode: s.mode })), config);
      expect(got.windowSamples).toBe(good.length);
      expect(got.report).toEqual(offline);
      expect(got.report.diagnosis.label).toBe(offline.diagnosis.label);
    });
  }
});

describe("schedule and memory", () => {
  it("assesses at most 1/RERUN_FACTOR window samples per incoming sample once the window is full (the 2 µs budget at ≤ 3 µs per window sample)", () => {
    // A healthy loop at 1 s with Ti 5 s: 12,063 samples, no decimation at 500.
    const rec = generateRecording("dev", plan.filter((p) => p.label === "healthy")[4]!.index);
    const config = parseLoopConfig(rec.config);
    const runs: { n: number; incoming: number }[] = [];
    let incoming = 0;
    const live = new LiveAssessor({ capacity: 500, now: () => 0, onResult: (r) => runs.push({ n: r.windowSamples, incoming }) });
    live.upsertLoop({ loopId: 3, tenantId: 1, siteId: 1, config });
    const tele = telemetryOf(rec.samples).filter((s) => s.quality === undefined || s.quality === "good");
    const stride = strideFor(config, 500);
    for (let i = 0; i < tele.length; i += 20) {
      const batch = tele.slice(i, i + 20);
      live.push(3, batch);
      incoming += batch.length;
      live.runDue(1e9);
    }
    const full = runs.filter((r) => r.n === 500);
    expect(full.length).toBeGreaterThan(3);
    const assessed = full.slice(1).reduce((s, r) => s + r.n * stride, 0);
    const fed = full.at(-1)!.incoming - full[0]!.incoming;
    // Steady state: each run of n stored samples waits for RERUN_FACTOR·n·stride new ones (20-sample batches overshoot a little).
    expect(assessed / fed).toBeLessThanOrEqual(1 / RERUN_FACTOR);
    expect(assessed / fed).toBeGreaterThan(0.9 / RERUN_FACTOR);
    // While the window fills, each run covers everything so far: at most (1 + R)/R window samples per incoming one.
    const filling = runs.filter((r) => r.n < 500);
    const fillAssessed = filling.reduce((s, r) => s + r.n * stride, 0);
    expect(fillAssessed / full[0]!.incoming).toBeLessThanOrEqual((1 + FILL_RERUN_FACTOR) / FILL_RERUN_FACTOR);
    // The gaps themselves (each at most one 20-sample batch late): FILL_RERUN_FACTOR times the data so
    // far while the window fills (when the first verdicts appear), RERUN_FACTOR windows once it is full.
    const gaps = runs.slice(1).map((r, k) => ({ after: runs[k]!.n, gap: r.incoming - runs[k]!.incoming }));
    expect(gaps.length).toBeGreaterThan(6);
    for (const { after, gap } of gaps) {
      const due = (after < 500 ? FILL_RERUN_FACTOR : RERUN_FACTOR) * after * stride;
      expect(gap).toBeGreaterThanOrEqual(due);
      expect(gap).toBeLessThan(due + 20);
    }
  });

  it("waits FIT_RERUN_FACTOR windows after a full-window run that fitted the sensitivity peak (a dead time configured), RERUN_FACTOR otherwise", () => {
    // A healthy flow loop (tests/assessment/loop-sim.ts, invented data) with its 4 s dead time configured, and without.
    const tele = telemetryOf(simulateLoop({ seed: 5, n: 40_000, kp: 0.5, ti: 15, deadS: 4 }));
    for (const deadTimeS of [4, null]) {
      const config = parseLoopConfig(flowLoopJson("FIC-220", { deadTimeS }));
      const runs: { n: number; incoming: number; factor: number; margin: boolean }[] = [];
      let incoming = 0;
      const live = new LiveAssessor({ capacity: 3_000, now: () => 0, onResult: (r) => runs.push({ n: r.windowSamples, incoming, factor: rerunFactor(r.report, config), margin: r.report.details.loopMargin !== null }) });
      live.upsertLoop({ loopId: 4, tenantId: 1, siteId: 1, config });
      expect(strideFor(config, 3_000)).toBe(1);
      for (let i = 0; i < tele.length; i += 20) {
        const batch = tele.slice(i, i + 20);
        live.push(4, batch);
        incoming += batch.length;
        live.runDue(1e9);
      }
      const gaps = runs.slice(1).map((r, k) => ({ before: runs[k]!, gap: r.incoming - runs[k]!.incoming })).filter((g) => g.before.n === 3_000);
      expect(gaps.length).toBeGreaterThan(1);
      const want = deadTimeS === null ? RERUN_FACTOR : FIT_RERUN_FACTOR;
      for (const { before, gap } of gaps) {
        expect(before.factor).toBe(want);
        if (deadTimeS !== null) expect(before.margin).toBe(true);
        expect(gap).toBeGreaterThanOrEqual(want * 3_000);
        expect(gap).toBeLessThan(want * 3_000 + 20);
      }
    }
  });

  it("decimates a slow loop's window (bounded memory) and assesses the decimated samples with the stored period", () => {
    const config = parseLoopConfig({ tag: "TIC-1", kind: "temperature", pvLo: 0, pvHi: 200, samplePeriodS: 1, controller: { kp: 1, ti: 900 } });
    const stride = strideFor(config, 1_000);
    expect(stride).toBe(36); // 40 Ti = 36,000 s over 1,000 samples at 1 s
    const live = new LiveAssessor({ capacity: 1_000, now: () => 0 });
    live.upsertLoop({ loopId: 5, tenantId: 1, siteId: 1, config });
    const tele: SampleDto[] = [];
    for (let k = 0; k < 50_000; k++) tele.push({ t: T0_MS + k * 1000, sp: 100, pv: 100 + Math.sin(k / 50), mv: 50, mode: "auto" });
    feed(live, 5, tele, 500);
    const w = live.window(5)!;
    expect(w.samples.length).toBe(1_000);
    expect(w.config.samplePeriodS).toBe(36);
    expect(w.samples[1]!.t - w.samples[0]!.t).toBe(36);
  });

  it("too little data: undetermined with the data time still needed, shown as not judged yet · about N min", () => {
    // A slow temperature loop (Ti 600 s) after two minutes at 1 s.
    const config = parseLoopConfig({ tag: "TIC-2", kind: "temperature", pvLo: 0, pvHi: 200, samplePeriodS: 1, controller: { kp: 1.2, ti: 600 } });
    const live = new LiveAssessor({ capacity: 3_600, now: () => 0 });
    live.upsertLoop({ loopId: 9, tenantId: 1, siteId: 1, config });
    let seed = 1;
    const rnd = () => ((seed = (seed * 16807) % 2147483647) / 2147483647) - 0.5;
    const tele: SampleDto[] = [];
    for (let k = 0; k < 120; k++) tele.push({ t: T0_MS + k * 1000, sp: 80, pv: 80 + rnd(), mv: 40 + rnd(), mode: "auto" });
    feed(live, 9, tele);
    const r = live.assessNow(9)!;
    expect(r.report.diagnosis.label).toBe("undetermined");
    expect(r.report.diagnosis.needsS).toBeGreaterThan(600);
    expect(findingPhrase({ label: "undetermined", confidence: 0, needsS: r.report.diagnosis.needsS ?? null })).toMatch(/^not judged yet · about \d+ (min|h)$/);
  });

  it("skips samples that are not good and samples out of order", () => {
    const config = parseLoopConfig({ tag: "FIC-3", kind: "flow", pvLo: 0, pvHi: 100, samplePeriodS: 1, controller: { kp: 0.5, ti: 5 } });
    const live = new LiveAssessor({ capacity: 1_000, now: () => 0 });
    live.upsertLoop({ loopId: 4, tenantId: 1, siteId: 1, config });
    live.push(4, [
      { t: T0_MS, sp: 1, pv: 1, mv: 1, mode: "auto" },
      { t: T0_MS + 1000, sp: 1, pv: -9999, mv: 1, mode: "auto", quality: "bad" },
      { t: T0_MS + 2000, sp: 1, pv: 2, mv: 1, mode: "auto", quality: "good" },
      { t: T0_MS + 1500, sp: 1, pv: 1, mv: 1, mode: "auto" },
    ]);
    expect(live.window(4)!.samples.map((s) => s.t)).toEqual([T0_MS / 1000, T0_MS / 1000 + 2]);
  });
});

/**
 * The configured dead time against the latest applied step test's (lib/assessment/config.ts,
 * deadTimeCaution). Both are meant as the apparent dead time a step test shows (the transport
 * delay plus about half of a second lag: Skogestad's half rule, 2003, from memory), and the tuning
 * yardsticks are stated in it (docs/assessment.md, "Harris index", "Which dead time"). When the
 * engineer's value and the step test's disagree by more than half again either way, the assessment
 * says so, naming both and which way the disagreement pushes the findings; the figures keep the
 * engineer's value. The 1.5 ratio is ours. Recording: a labelled DEV recording of the benchmark
 * generator (simulators/benchmark) with a known dead time, assessed with and without the field.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, deadTimeCaution, DEAD_TIME_DISAGREEMENT, parseLoopConfig } from "@/lib/assessment";
import { benchmarkPlan, generateRecording } from "@/simulators/benchmark/generate";

describe("deadTimeCaution", () => {
  it("names both values when the configured one is well under the step test's (a transport delay entered alone)", () => {
    const c = deadTimeCaution({ deadTimeS: 5, stepTestDeadTimeS: 12 });
    expect(c).toMatch(/configured dead time \(5 s\) is well under .* step test \(12 s\)/);
    expect(c).toMatch(/reads sluggish/);
  });

  it("and when it is well over it (lenient yardsticks)", () => {
    const c = deadTimeCaution({ deadTimeS: 30, stepTestDeadTimeS: 12 });
    expect(c).toMatch(/configured dead time \(30 s\) is well over .* step test \(12 s\)/);
    expect(c).toMatch(/lenient/);
  });

  it("is silent inside the ratio, at its edges, and when either value is missing or zero", () => {
    for (const [a, b] of [[5, 6], [6, 5], [8, 8 * DEAD_TIME_DISAGREEMENT], [8 * DEAD_TIME_DISAGREEMENT, 8], [null, 5], [5, null], [0, 5], [5, 0]] as [number | null, number | null][]) {
      expect(deadTimeCaution({ deadTimeS: a, stepTestDeadTimeS: b }), `${a} / ${b}`).toBeNull();
    }
  });

  it("the LOOP.json field is optional, checked like the dead time, and null by default", () => {
    const base = { pvLo: 0, pvHi: 100, samplePeriodS: 1, deadTimeS: 4, controller: { kp: 0.5, ti: 20 } };
    expect(parseLoopConfig(base).stepTestDeadTimeS).toBeNull();
    expect(parseLoopConfig({ ...base, stepTestDeadTimeS: "9" }).stepTestDeadTimeS).toBe(9);
    expect(() => parseLoopConfig({ ...base, stepTestDeadTimeS: -1 })).toThrow(/stepTestDeadTimeS: must be >= 0/);
  });
});

describe("in the assessment", () => {
  const plan = benchmarkPlan();
  const rec = plan
    .filter((p) => p.label === "healthy")
    .map((p) => generateRecording("dev", p.index))
    .find((r) => r.config.deadTimeS !== undefined && r.config.deadTimeS > 0)!;

  it("adds the caution and changes no figure and no verdict", () => {
    const config = parseLoopConfig(rec.config);
    const plain = assessLoop(rec.samples, config);
    const withStep = assessLoop(rec.samples, { ...config, stepTestDeadTimeS: config.deadTimeS! * 3 });
    const caution = deadTimeCaution({ deadTimeS: config.deadTimeS, stepTestDeadTimeS: config.deadTimeS! * 3 })!;
    expect(withStep.cautions).toContain(caution);
    expect(plain.cautions).not.toContain(caution);
    expect(withStep.cautions.filter((c) => c !== caution)).toEqual(plain.cautions);
    expect(withStep.harrisIndex).toBe(plain.harrisIndex);
    expect(withStep.diagnosis).toEqual(plain.diagnosis);
    // agreeing values: no caution
    const agreeing = assessLoop(rec.samples, { ...config, stepTestDeadTimeS: config.deadTimeS! * 1.2 });
    expect(agreeing.cautions).toEqual(plain.cautions);
  });
});

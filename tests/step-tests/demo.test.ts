/**
 * The demo step test (simulators/step-tests, invented demo data) is current and identifies as the
 * demo plant it was simulated from (truth: DEMO_PLANTS["TIC-1201"], first order plus dead time).
 */
import { readFileSync } from "node:fs";
import path from "node:path";
import { describe, expect, it } from "vitest";
import { DEMO_LOOPS, DEMO_PLANTS } from "@/lib/seed/demo";
import { parseStepTestCsv } from "@/lib/step-tests/csv";
import { identifyStepTest } from "@/lib/step-tests/identify";
import { demoStepTestCsv } from "@/simulators/step-tests/generate";

const file = path.join(import.meta.dirname, "..", "..", "simulators", "step-tests", "tic-1201-bump-test.csv");

describe("demo step test", () => {
  it("the committed CSV equals the generator's output", () => {
    expect(readFileSync(file, "utf8")).toBe(demoStepTestCsv());
  });

  it("identifies as the demo plant it was simulated from", () => {
    const loop = DEMO_LOOPS.find((l) => l.tag === "TIC-1201")!;
    const plant = DEMO_PLANTS["TIC-1201"]!.plant;
    if (plant.type !== "first-order") throw new Error("TIC-1201 is expected to be first order");
    const parsed = parseStepTestCsv(readFileSync(file), { pvUnits: loop.units, mvUnits: "%", pvLo: loop.pvLo, pvHi: loop.pvHi, mvLo: 0, mvHi: 100 });
    expect(parsed.timeKind).toBe("iso");
    const r = identifyStepTest(parsed, { telemetryPeriodS: loop.telemetryPeriodS, pvLo: loop.pvLo, pvHi: loop.pvHi, mvLo: 0, mvHi: 100 });
    expect(Math.abs(r.continuous.gainPercent! - plant.gain) / plant.gain).toBeLessThan(0.03);
    expect(Math.abs(r.continuous.timeConstantS! - plant.timeConstantS) / plant.timeConstantS).toBeLessThan(0.05);
    expect(Math.abs(r.continuous.deadTimeS! - plant.deadTimeS)).toBeLessThan(loop.telemetryPeriodS);
    expect(r.identification.fitPercent).toBeGreaterThan(90);
    expect(r.proposal!.estimationPeriodS % loop.telemetryPeriodS).toBe(0);
  });
});

/**
 * The phase-margin ceiling of a PI controller on an integrating process with an entered dead time
 * (level-phase-ceiling.ts), checked against a numerical search over gains with numpy
 * (tests/reference/generate_level_phase_ceiling.py, fixture tests/reference/fixtures/level-phase-ceiling.json):
 * - the closed form atan(√(r − 1)) − √(r − 1)/r equals the best margin over all gains within 0.1°
 *   for Ti/θ = 1.5–14, and no gain gives a positive margin at Ti/θ = 0.8;
 * - with a further lag the best margin stays below the ceiling (a lag only takes phase away);
 * - the limit: below 30° (the least of the usual design ranges, common practice) exactly when
 *   Ti < 3.3 θ; SIMC's tightest integral time, 8 θ (Skogestad 2003, from memory), gives about 50°;
 * - the verdict: a quiet level loop read healthy or sluggish from its data becomes an aggressive
 *   finding when its integral time is 2.5 dead times, not at SIMC's 8, not with derivative action,
 *   not without an entered dead time, not on a self-regulating loop.
 */
import { readFileSync } from "node:fs";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import { describe, expect, it } from "vitest";
import { diagnose } from "@/lib/assessment/diagnosis";
import { levelPhaseCeiling, MIN_PHASE_MARGIN_DEG, phaseMarginCeilingDeg } from "@/lib/assessment/level-phase-ceiling";
import { diagnosisInput } from "./diagnosis-input";
import { pythonHas, staleFixture } from "../helpers/python";

const here = dirname(fileURLToPath(import.meta.url));
const fixture = JSON.parse(readFileSync(join(here, "../reference/fixtures/level-phase-ceiling.json"), "utf8")) as {
  cases: { tiOverDead: number; lagS: number; bestMarginDeg: number }[];
};
const hasNumpy = pythonHas("numpy");

describe("phase-margin ceiling of a PI loop on an integrating process", () => {
  it.skipIf(!hasNumpy)("the fixture is what its generator gives (numpy)", () => {
    expect(staleFixture(join(here, "../reference/generate_level_phase_ceiling.py"), join(here, "../reference/fixtures/level-phase-ceiling.json"))).toBeNull();
  });

  it("equals the best margin over all gains (numpy search) within 0.1°, and is 0 at or below Ti = θ", () => {
    const plain = fixture.cases.filter((c) => c.lagS === 0);
    expect(plain.length).toBe(10);
    for (const c of plain) {
      if (c.tiOverDead <= 1) {
        expect(phaseMarginCeilingDeg(c.tiOverDead)).toBe(0);
        expect(c.bestMarginDeg).toBeLessThanOrEqual(0);
      } else expect(Math.abs(phaseMarginCeilingDeg(c.tiOverDead) - c.bestMarginDeg)).toBeLessThan(0.1);
    }
  });

  it("stays a ceiling when the process has a further lag", () => {
    const lagged = fixture.cases.filter((c) => c.lagS > 0);
    expect(lagged.length).toBe(2);
    for (const c of lagged) expect(c.bestMarginDeg).toBeLessThan(phaseMarginCeilingDeg(c.tiOverDead));
  });

  it("falls below 30° exactly when Ti < 3.3 θ; SIMC's 8 θ gives about 50°", () => {
    expect(MIN_PHASE_MARGIN_DEG).toBe(30);
    expect(phaseMarginCeilingDeg(3.2)).toBeLessThan(30);
    expect(phaseMarginCeilingDeg(3.3)).toBeGreaterThan(30);
    expect(phaseMarginCeilingDeg(8)).toBeGreaterThan(50);
    expect(phaseMarginCeilingDeg(8)).toBeLessThan(51);
  });
});

describe("the ceiling in the diagnosis", () => {
  const level = (ti: number, td = 0, dead: number | null = 10) => levelPhaseCeiling({ integrating: true, tiS: ti, tdS: td, deadTimeS: dead });

  it("turns a healthy or sluggish verdict into an aggressive finding at Ti = 2.5 θ, saying to check the dead time", () => {
    expect(diagnose(diagnosisInput({})).label).toBe("healthy");
    const d = diagnose(diagnosisInput({ phaseCeiling: level(25) }));
    expect(d.label).toBe("aggressive-tuning");
    expect(d.confidence).toBeCloseTo(0.65, 9);
    expect(d.evidence[0]).toMatch(/phase margin of at most 23°/);
    expect(d.evidence.join(" ")).toMatch(/check that value/);
    const slow = diagnosisInput({ harrisIndex: 6, disturbanceTimeToDeadTime: 20 });
    expect(diagnose(slow).label).toBe("sluggish-tuning");
    expect(diagnose({ ...slow, phaseCeiling: level(25) }).label).toBe("aggressive-tuning");
  });

  it("rises with a weak ringing in the data, and adds its line to an aggressive finding", () => {
    expect(diagnose(diagnosisInput({ ringDepth: -0.2, phaseCeiling: level(25) })).confidence).toBeCloseTo(0.75, 9);
    const ringing = diagnosisInput({ ringDepth: -0.5 });
    const before = diagnose(ringing);
    expect(before.label).toBe("aggressive-tuning");
    const after = diagnose({ ...ringing, phaseCeiling: level(25) });
    expect(after.confidence).toBeCloseTo(Math.min(0.95, before.confidence + 0.1), 9);
    expect(after.evidence.length).toBe(before.evidence.length + 1);
  });

  it("does nothing at SIMC's integral time, with derivative action, without a dead time or on a self-regulating loop", () => {
    expect(diagnose(diagnosisInput({ phaseCeiling: level(80) })).label).toBe("healthy");
    expect(level(25, 5)).toBeNull();
    expect(level(25, 0, null)).toBeNull();
    expect(levelPhaseCeiling({ integrating: false, tiS: 25, tdS: 0, deadTimeS: 10 })).toBeNull();
  });
});

/**
 * Shape test of valve stiction (curve fit of half-cycles: He, Wang, Pottmann & Qin 2007; journal
 * from memory: Ind. Eng. Chem. Res. 46) on loops whose output also drifts. A sticking valve makes
 * the MV of a self-regulating loop triangular; set-point moves shift MV by far more than the
 * stick-slip cycle, so zero crossings about the whole record's mean say nothing about the cycle.
 * The half-cycles are found on MV less its local mean over three periods (ours; a moving mean
 * over whole periods leaves a periodic cycle's shape intact, common practice). Loops simulated
 * with seeds; the sticking valve follows the two-parameter model of Choudhury, Thornhill & Shah,
 * Control Eng. Practice 13 (2005).
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { flowLoopJson, simulateLoop, type SimOptions } from "./loop-sim";

const cfg = parseLoopConfig(flowLoopJson("FIC-204", {}));
/** Set-point moves of 18-35 % of span, each shifting MV (process gain 1) by as much. */
const spSteps = [
  { at: 1500, sp: 70 },
  { at: 3000, sp: 35 },
  { at: 4500, sp: 60 },
];

function run(make: (seed: number) => SimOptions) {
  const out: { label: string; shape: string }[] = [];
  for (let seed = 1; seed <= 10; seed++) {
    const r = assessLoop(simulateLoop(make(seed)), cfg);
    out.push({ label: r.diagnosis.label, shape: r.details.stictionTests.curveFit.note });
  }
  return out;
}

describe("stiction shape test with set-point moves (10 seeds)", () => {
  it("a sticking valve (S = 4 %, J = 1 %) still shows triangular MV half-cycles and reads valve-stiction in at least 5 of 10", () => {
    // Without the local mean the half-cycles were too few on every seed (0 of 10 read stiction).
    const got = run((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, stiction: { S: 4, J: 1 }, sp0: 52, spSteps }));
    const text = got.map((g) => `${g.label}/${g.shape}`).join(",");
    expect(got.filter((g) => g.shape === "triangular").length, text).toBeGreaterThanOrEqual(5);
    expect(got.filter((g) => g.label === "valve-stiction").length, text).toBeGreaterThanOrEqual(5);
  });

  it("an outside sinusoid with the same set-point moves keeps sinusoidal half-cycles and never reads stiction", () => {
    const got = run((seed) => ({ seed, n: 6000, kp: 0.5, ti: 15, sine: { amplitude: 2, periodS: 100 + 10 * seed }, spSteps }));
    const text = got.map((g) => `${g.label}/${g.shape}`).join(",");
    expect(got.filter((g) => g.label === "valve-stiction").length, text).toBe(0);
    expect(got.filter((g) => g.shape === "sinusoidal").length, text).toBeGreaterThanOrEqual(6);
  });
});

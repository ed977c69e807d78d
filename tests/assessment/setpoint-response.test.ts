/**
 * The loop's response to its own set-point moves (setpoint-response.ts), checked against the
 * closed-loop step responses computed with scipy.signal.lfilter by
 * tests/reference/generate_setpoint_response.py (fixture tests/reference/fixtures/setpoint-response.json)
 * for the loop of loop-sim.ts (K = 1, τ = 20 s, two samples of transport delay, T = 1 s):
 * - SIMC tuning (Skogestad, J. Process Control 13, 2003; from memory: kp 2.9, Ti 20 s) moves PV
 *   4 s after a set-point step, reaches 20 % after 5 s and 63 % after 8 s;
 * - a twentieth of that gain with Ti = 100 s moves after 4 s too, reaches 20 % after 81 s and 63 %
 *   after 655 s.
 * Simulated with measurement noise and an AR(1) load, set-point steps of about 5 % at irregular
 * intervals, over 10 seeds each: the apparent dead time lies between the first move (less one
 * block of the fit and one sample) and the 20 % time, t63 within a fifth of scipy's (plus the
 * fit's block length), the SIMC loop reads fast (t63 under 4 apparent dead times; scipy's ratio
 * is 8 / 4 = 2 at the first move) and the slow one sluggish (655 / 4), also as the verdict of
 * `assessLoop` without a configured dead time (the code before this figure read that loop healthy in
 * 10 of 10 seeds). Swanda & Seborg (Proc. ACC 1999; from memory) judge
 * a PI loop by its set-point response time against its dead time in the same way.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { setPointResponse, setPointSigns } from "@/lib/assessment/setpoint-response";
import { flowLoopJson, irregularSetPointSteps, simulateLoop } from "./loop-sim";
import { pythonHas, referenceFixture, staleReference } from "../helpers/python";

interface RefCase {
  name: string;
  kp: number;
  ti: number;
  d: number;
  delayS: number;
  t20S: number;
  t63S: number;
}
const fixture = referenceFixture<{ cases: RefCase[] }>("setpoint-response.json");
const hasScipy = pythonHas("numpy, scipy");
const ref = (name: string) => fixture.cases.find((c) => c.name === name)!;

function responseOf(samples: ReturnType<typeof simulateLoop>, ti: number) {
  const n = samples.length;
  const pv = Float64Array.from(samples, (s) => s.pv);
  const sp = Float64Array.from(samples, (s) => s.sp);
  return setPointResponse({ pv, sp, stretches: [[0, n]], T: 1, horizonS: 20 * ti });
}

describe("set-point response from routine data", () => {
  it.skipIf(!hasScipy)("the fixture is up to date with its scipy generator", () => {
    expect(staleReference("generate_setpoint_response.py", "setpoint-response.json")).toBeNull();
  });

  it.each([
    { name: "simc", n: 8000, every: 400, fast: true },
    { name: "sluggish", n: 24_000, every: 2000, fast: false },
  ])("$name: dead time, t63 and the sign against scipy's step response (10 seeds)", ({ name, n, every, fast }) => {
    const c = ref(name);
    for (let seed = 1; seed <= 10; seed++) {
      const samples = simulateLoop({ seed, n, kp: c.kp, ti: c.ti, deadS: c.d, noise: 0.1, loadPole: 0.99, loadSigma: 0.05, spSteps: irregularSetPointSteps(n, every) });
      const r = responseOf(samples, c.ti);
      expect(r, `seed ${seed}`).not.toBeNull();
      // the tangent may fall up to a block before the first move, plus a sample of the hold
      expect(r!.deadTimeS, `seed ${seed}`).toBeGreaterThanOrEqual(c.delayS - 1 - r!.resolutionS);
      expect(r!.deadTimeS, `seed ${seed}`).toBeLessThanOrEqual(c.t20S + r!.resolutionS);
      expect(r!.t63S, `seed ${seed}`).not.toBeNull();
      expect(Math.abs(r!.t63S! - c.t63S), `seed ${seed}: t63 ${r!.t63S}`).toBeLessThanOrEqual(0.2 * c.t63S + r!.resolutionS);
      const signs = setPointSigns(r, false);
      expect(signs.fast, `seed ${seed}: ratio ${r!.ratio}`).toBe(fast);
      expect(signs.slow, `seed ${seed}: ratio ${r!.ratio}`).toBe(!fast);
    }
  });

  it("reads the slow loop as sluggish without a configured dead time, with the set-point evidence (10 seeds)", () => {
    const c = ref("sluggish");
    const cfg = parseLoopConfig(flowLoopJson("FIC-207", { deadTimeS: null }, { kp: c.kp, ti: c.ti }));
    for (let seed = 1; seed <= 10; seed++) {
      const n = 24_000;
      const r = assessLoop(simulateLoop({ seed, n, kp: c.kp, ti: c.ti, deadS: c.d, spSteps: irregularSetPointSteps(n, 2000) }), cfg);
      expect(r.diagnosis.label, `seed ${seed}`).toBe("sluggish-tuning");
      expect(r.diagnosis.evidence.some((l) => l.includes("set point's moves are followed slowly")), `seed ${seed}`).toBe(true);
      expect(r.harrisIndex, "the Harris index stays null without a configured dead time").toBeNull();
      expect(r.cautions.some((l) => l.startsWith("Apparent dead time")), `seed ${seed}`).toBe(true);
    }
  });

  it("an unfinished move reads slow only when the response is shown short of 63 %, not when it is merely noisy", () => {
    // The rule is ours (docs/assessment-rounds.md, "Sluggishness from the set point's own moves"): a
    // lower bound on t63 is evidence of slowness only if the step response's upper bound at the
    // horizon stays below 0.63.
    const base = { deadTimeS: 0.7, t63S: null, horizonS: 29, ratio: 41, lowerBound: true, resolutionS: 0.3, strength: 6, overshoot: null, overshootSe: null };
    expect(setPointSigns({ ...base, shortOfMove: true }, false).slow).toBe(true);
    const noisy = setPointSigns({ ...base, shortOfMove: false }, false);
    expect(noisy.slow).toBe(false);
    expect(noisy.line).toMatch(/not read as slow/);
  });

  it("is null when the set point never moves", () => {
    const samples = simulateLoop({ seed: 3, n: 6000, kp: 2.9, ti: 20 });
    expect(responseOf(samples, 20)).toBeNull();
    expect(setPointSigns(null, false)).toEqual({ slow: false, fast: false, line: null });
  });

  it("is null when PV never answers the set point's moves (residuals all zero: no standard error divides by zero)", () => {
    // a PV held still under 5 % set-point steps: no response at any lag, whatever the block length
    const n = 6000;
    const sp = Float64Array.from({ length: n }, (_, i) => 50 + 5 * (Math.floor(i / 700) % 2));
    expect(setPointResponse({ pv: new Float64Array(n).fill(50), sp, stretches: [[0, n]], T: 1, horizonS: 2000 })).toBeNull();
  });
});

/**
 * The overshoot of the loop's response to its own set-point moves as a sign of aggressive tuning
 * (setpoint-overshoot.ts), checked against closed-loop step responses computed with scipy.signal
 * by tests/reference/generate_setpoint_overshoot.py (fixture tests/reference/fixtures/setpoint-overshoot.json):
 * - the limits: SIMC at its tightest (τc = θ; Skogestad 2003, from memory) overshoots by at most
 *   28 % on every plant of the survey (integrating 28 %, lag-dominant first-order 27 %, others
 *   4–15 %), under GOOD_OVERSHOOT; aggressive settings (gain margin 1.25–1.7, Ti 0.3–0.7 of SIMC's)
 *   overshoot by 52 % and more, above OVERSHOOT_LIMIT (half the move: quarter-amplitude damping
 *   of a second-order response, common practice);
 * - the read: the loops of loop-sim.ts with set-point steps, measurement noise and an AR(1) load,
 *   10 seeds each: the fitted overshoot within 0.15 of scipy's (plus three standard errors), the
 *   sign on the aggressive loops and not on the SIMC ones;
 * - the verdict: an aggressive loop whose error ringing is buried by a slow load reads healthy or
 *   sluggish from the error alone and aggressive with the set-point overshoot.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { GOOD_OVERSHOOT, OVERSHOOT_LIMIT, withSetPointOvershoot } from "@/lib/assessment/setpoint-overshoot";
import { setPointResponse, setPointSigns } from "@/lib/assessment/setpoint-response";
import { flowLoopJson, irregularSetPointSteps, simulateLoop } from "./loop-sim";
import { pythonHas, referenceFixture, staleReference } from "../helpers/python";

interface LoopCase {
  name: string;
  integrating: boolean;
  kp: number;
  ti: number;
  d: number;
  overshoot: number;
}
const fixture = referenceFixture<{ loops: LoopCase[]; survey: { plant: string; ratioOrLag: number; tuning: string; overshoot: number }[] }>("setpoint-overshoot.json");
const hasScipy = pythonHas("numpy, scipy");
const loop = (name: string) => fixture.loops.find((c) => c.name === name)!;

describe("set-point overshoot as a sign of aggressive tuning", () => {
  it.skipIf(!hasScipy)("the fixture is up to date with its scipy generator", () => {
    expect(staleReference("generate_setpoint_overshoot.py", "setpoint-overshoot.json")).toBeNull();
  });

  it("the limits lie above every SIMC loop of the scipy survey and below every aggressive one", () => {
    const simc = fixture.survey.filter((s) => s.tuning === "simc");
    const aggressive = fixture.survey.filter((s) => s.tuning.startsWith("aggressive"));
    expect(simc.length).toBeGreaterThan(10);
    expect(aggressive.length).toBeGreaterThan(10);
    // the integrating process's PI zero: SIMC overshoots a level loop's set-point step by about 28 %
    const level = simc.filter((s) => s.plant === "integrating");
    for (const s of level) expect(s.overshoot, `lag ${s.ratioOrLag}`).toBeGreaterThan(0.25);
    for (const s of simc) expect(s.overshoot, `${s.plant} ${s.ratioOrLag}`).toBeLessThan(GOOD_OVERSHOOT);
    for (const s of aggressive) expect(s.overshoot, `${s.plant} ${s.ratioOrLag} ${s.tuning}`).toBeGreaterThan(OVERSHOOT_LIMIT);
  });

  it.each([
    { name: "simc", sign: false },
    { name: "aggressive", sign: true },
    { name: "simc-level", sign: false },
    { name: "aggressive-level", sign: true },
  ])("$name: the overshoot read against scipy's step response, and the sign (10 seeds)", ({ name, sign }) => {
    const c = loop(name);
    const n = 8000;
    for (let seed = 1; seed <= 10; seed++) {
      const samples = simulateLoop({ seed, n, integrating: c.integrating, kp: c.kp, ti: c.ti, deadS: c.d, noise: 0.1, loadPole: 0.99, loadSigma: 0.05, spSteps: irregularSetPointSteps(n, 400) });
      const pv = Float64Array.from(samples, (s) => s.pv);
      const sp = Float64Array.from(samples, (s) => s.sp);
      const r = setPointResponse({ pv, sp, stretches: [[0, n]], T: 1, horizonS: 20 * c.ti });
      expect(r?.overshoot, `seed ${seed}`).not.toBeNull();
      expect(Math.abs(r!.overshoot! - c.overshoot), `seed ${seed}: ${r!.overshoot} ± ${r!.overshootSe} against ${c.overshoot}`).toBeLessThanOrEqual(0.15 + 3 * r!.overshootSe!);
      const s = setPointSigns(r, c.integrating);
      expect(s.overshoot != null, `seed ${seed}: ${r!.overshoot} ± ${r!.overshootSe}`).toBe(sign);
    }
  });

  it("an aggressive loop whose ringing a slow load buries reads aggressive from its set-point moves (fails without the overshoot sign)", () => {
    const c = loop("aggressive");
    const cfg = parseLoopConfig(flowLoopJson("FIC-418", {}, { kp: c.kp, ti: c.ti }));
    let found = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const n = 20_000;
      // a slow, strong load (pole 0.999) and measurement noise: the error's correlation shows no ringing
      const r = assessLoop(simulateLoop({ seed, n, kp: c.kp, ti: c.ti, deadS: c.d, noise: 0.3, loadPole: 0.999, loadSigma: 0.15, spSteps: irregularSetPointSteps(n, 1500) }), cfg);
      if (r.diagnosis.label === "aggressive-tuning" && r.diagnosis.evidence.some((l) => l.includes("set point's moves overshoot"))) found++;
    }
    expect(found).toBeGreaterThanOrEqual(8);
  });

  it("one sign alone is a possible finding; agreeing signs raise it; a slow set-point response or another verdict is left alone", () => {
    const healthy = { label: "healthy" as const, confidence: 0.7, evidence: ["likely healthy"] };
    const line = "the set point's moves overshoot by about 70 % of the move";
    const alone = withSetPointOvershoot(healthy, { overshoot: line, ringDepth: null, acfDecay: null });
    expect(alone.label).toBe("aggressive-tuning");
    expect(alone.confidence).toBeLessThan(0.6);
    const agreeing = withSetPointOvershoot(healthy, { overshoot: line, ringDepth: -0.25, acfDecay: { ratio: 0.55, decayRatio: 0.3, troughS: 30, periodS: 60, depth: 0.3, standardError: 0.05, ratioSd: 0.1 } });
    expect(agreeing.confidence).toBeGreaterThan(alone.confidence + 0.15);
    expect(withSetPointOvershoot(healthy, { overshoot: line, slow: true, ringDepth: null, acfDecay: null })).toBe(healthy);
    const stiction = { label: "valve-stiction" as const, confidence: 0.7, evidence: [] };
    expect(withSetPointOvershoot(stiction, { overshoot: line, ringDepth: null, acfDecay: null })).toBe(stiction);
    expect(withSetPointOvershoot(healthy, { overshoot: null, ringDepth: -0.3, acfDecay: null })).toBe(healthy);
  });
});

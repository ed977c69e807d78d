/**
 * An error that never swings back within the record (lib/assessment/error-wander.ts): with the set
 * point held and integral action, the sensitivity vanishes at zero frequency, so a loop's error
 * must cross back within a few closed-loop times (the internal model principle; common practice);
 * one whose autocorrelation shows no period at all over the record is slow to remove its
 * disturbances (Hägglund 1999 calls that sluggish; from memory). One sign: a possible finding.
 *
 * Simulated loops: tests/assessment/loop-sim.ts (invented data): K = 1, τ = 20 s, dead time 2 s,
 * no dead time configured, 6,000 s at 1 s under a slow AR(1) load (pole 0.9995, about 2,000 s).
 * SIMC (Skogestad 2003, from memory; τc = θ: kp ≈ 2.9, Ti = τ = 20 s) is the healthy reference; a
 * gain 58 times lower with Ti = 200 s is sluggish by construction (20 s² + 1.05 s + 0.00025 = 0:
 * slow closed-loop root s ≈ −2.4e-4 /s, a time constant of about 4,200 s), ten seeds each.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { errorWander } from "@/lib/assessment/error-wander";
import { opensWorkItem } from "@/lib/domain/findings";
import { flowLoopJson, simulateLoop } from "./loop-sim";

const slowLoad = { loadPole: 0.9995, loadSigma: 0.01 };
const config = (kp: number, ti: number) => parseLoopConfig(flowLoopJson("FIC-311", { deadTimeS: null, controller: { kp, ti, mvLo: 0, mvHi: 100 } }));

describe("the error never swings back within the record", () => {
  it("a sluggish loop without a configured dead time reads as a possible sluggish finding from this sign in at least 5 of 10 seeds", () => {
    // Before this sign none of them did (no period, so no swing-back was read; 7 of 10 seen with it,
    // the others' ACF completes a swing within the record).
    let found = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const r = assessLoop(simulateLoop({ seed, n: 6000, kp: 0.05, ti: 200, ...slowLoad }), config(0.05, 200));
      if (r.diagnosis.label !== "sluggish-tuning" || !r.diagnosis.evidence.some((e) => /never settles into swinging back/.test(e))) continue;
      found++;
      expect(r.details.errorWander!.crossings).toBeLessThan(3);
      // one sign alone: stated, but no work item (tuning-confidence.ts)
      expect(opensWorkItem(r.diagnosis)).toBe(false);
    }
    expect(found).toBeGreaterThanOrEqual(5);
  });

  it("a SIMC-tuned loop under the same slow load stays healthy on 10 of 10 seeds and shows no such wander", () => {
    for (let seed = 1; seed <= 10; seed++) {
      const r = assessLoop(simulateLoop({ seed, n: 6000, kp: 2.9, ti: 20, ...slowLoad }), config(2.9, 20));
      expect(r.diagnosis.label).toBe("healthy");
      expect(r.details.errorWander ?? null).toBeNull();
    }
  });

  it("is not read when the set point moves (its own response is the better evidence) or a period was found", () => {
    const spSteps = [1500, 3000, 4500].map((at, i) => ({ at, sp: i % 2 ? 50 : 55 }));
    const r = assessLoop(simulateLoop({ seed: 1, n: 6000, kp: 0.05, ti: 200, ...slowLoad, spSteps }), config(0.05, 200));
    expect(r.details.errorWander ?? null).toBeNull();
    const acf = Float64Array.from({ length: 600 }, (_, k) => 1 - k / 300);
    expect(errorWander({ acf, T: 1, n: 1000, periodFound: true, crossings: 5, setPointHeld: true, integrating: false })).toBeNull();
    expect(errorWander({ acf, T: 1, n: 1000, periodFound: false, crossings: 1, setPointHeld: false, integrating: false })).toBeNull();
    expect(errorWander({ acf, T: 1, n: 1000, periodFound: false, crossings: 1, setPointHeld: true, integrating: true })).toBeNull();
    expect(errorWander({ acf, T: 1, n: 1000, periodFound: false, crossings: 3, setPointHeld: true, integrating: false })).toBeNull();
    // an ACF that reaches zero early (5 % of the record) has decorrelated, not wandered
    const early = Float64Array.from({ length: 600 }, (_, k) => Math.max(1 - k / 50, 0) - (k > 50 ? 0.2 : 0));
    expect(errorWander({ acf: early, T: 1, n: 1000, periodFound: false, crossings: 1, setPointHeld: true, integrating: false })).toBeNull();
    // an ACF that never swings below the band shows no recovery at all (a decorrelated error, a trend)
    expect(errorWander({ acf, T: 1, n: 1000, periodFound: false, crossings: 0, setPointHeld: true, integrating: false })).toBeNull();
    // first zero of a linearly falling ACF at lag 300: 300 s, 30 % of the record
    expect(errorWander({ acf, T: 1, n: 1000, periodFound: false, crossings: 1, setPointHeld: true, integrating: false })).toEqual({ crossings: 1, firstZeroS: 300, firstZeroShare: 0.3 });
  });
});

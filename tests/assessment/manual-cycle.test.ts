/**
 * A weak cycle that persists while the loop is in manual is from outside (Hägglund, Control Eng.
 * Practice 3, 1995: with the output held neither tuning nor a valve drives PV;
 * lib/assessment/manual-cycle.ts). Simulated loop: tests/assessment/loop-sim.ts (invented data),
 * SIMC-tuned (Skogestad 2003: kp ≈ 2.9, Ti = τ = 20 s), an AR(1) load, a manual stretch of 1,200 s,
 * ten seeds each.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { flowLoopJson, simulateLoop } from "./loop-sim";

const cfg = parseLoopConfig(flowLoopJson("FIC-311", { deadTimeS: 3, controller: { kp: 2.9, ti: 20, mvLo: 0, mvHi: 100 } }));
const run = (seed: number, sine: boolean) =>
  assessLoop(simulateLoop({ seed, n: 6000, kp: 2.9, ti: 20, loadSigma: 0.1, loadPole: 0.98, manual: [[2000, 3200]], ...(sine ? { sine: { amplitude: 0.8, periodS: 240 } } : {}) }), cfg);

describe("a cycle that persists in manual (10 seeds)", () => {
  it("a 240 s sinusoid too weak for the oscillation test reads external-disturbance through the manual stretch in at least 6 of 10 (9 seen)", () => {
    let viaManual = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const r = run(seed, true);
      expect(r.oscillation.detected).toBe(false);
      if (r.diagnosis.label === "external-disturbance" && /persists while the loop is in manual/.test(r.diagnosis.evidence[0]!)) {
        viaManual++;
        expect(Math.abs(r.details.spectralLine!.periodS / 240 - 1)).toBeLessThan(0.05);
      }
    }
    expect(viaManual).toBeGreaterThanOrEqual(6);
  });

  it("the same loop and manual stretch without the sinusoid never reads external-disturbance", () => {
    for (let seed = 1; seed <= 10; seed++) expect(run(seed, false).diagnosis.label).not.toBe("external-disturbance");
  });
});

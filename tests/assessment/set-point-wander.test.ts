/**
 * A set point that moves all the time (a cascade slave driven by its master) leaves no
 * constant-set-point stretch; the error's figures are then taken over the closed-loop stretches
 * with the set point's moves as one more disturbance (index.ts, setPointWanders). The basis:
 * e = S(q)(r − d) for set point r and load d, and the first b terms of the error's impulse
 * response are fixed by the delay under any feedback (Harris, Can. J. Chem. Eng. 67, 1989;
 * Desborough & Harris, Can. J. Chem. Eng. 70, 1992, assess the control error). Checks on the
 * simulated first-order loop of loop-sim.ts (K = 1, τ = 20 s, dead time 3 s) with an AR(1) set
 * point (pole 0.998 per second, about 2 % of span): SIMC tuning at τc = θ (Skogestad, J. Process
 * Control 13, 2003; from memory: Kc = τ/(K·2θ) ≈ 3.3, Ti = min(τ, 8θ) = 20 s; 2.9 used, as in
 * disturbance-time.test.ts) stays within 15 dead times and is not read sluggish; a gain 20 times
 * lower with Ti = 100 s (closed-loop root s ≈ −0.0013 /s, about 250 dead times) is read
 * sluggish; over 10 seeds each. Before this change both had no Harris index and no disturbance
 * time and read healthy.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { mulberry32, normal } from "../helpers/seeded-random";
import { flowLoopJson, simulateLoop } from "./loop-sim";

function wanderingSetPoint(seed: number, n: number): { at: number; sp: number }[] {
  const rnd = normal(mulberry32(1000 + seed));
  const pole = 0.998;
  const sd = 2 * Math.sqrt(1 - pole * pole);
  let r = 0;
  return Array.from({ length: n }, (_, k) => {
    r = pole * r + sd * rnd();
    return { at: k, sp: 50 + r };
  });
}

describe("error figures under a wandering set point (cascade slave)", () => {
  it.each([
    { name: "SIMC tuning (kp 2.9, Ti 20 s): disturbance time within 15 dead times, not sluggish", kp: 2.9, ti: 20, sluggish: false },
    { name: "a gain 20 times lower with Ti 100 s: beyond 15 dead times, read sluggish", kp: 0.15, ti: 100, sluggish: true },
  ])("$name (10 seeds)", ({ kp, ti, sluggish }) => {
    const cfg = parseLoopConfig(flowLoopJson("FIC-318", { deadTimeS: 3, normalMode: "cascade", controller: { kp, ti, mvLo: 0, mvHi: 100 } }));
    for (let seed = 1; seed <= 10; seed++) {
      const n = 6000;
      const samples = simulateLoop({ seed, n, kp, ti, spSteps: wanderingSetPoint(seed, n) }).map((s) => ({ ...s, mode: "cascade" as const }));
      const r = assessLoop(samples, cfg);
      expect(r.cautions.some((c) => c.startsWith("The set point moves nearly all the time")), `seed ${seed}`).toBe(true);
      const ratio = r.details.disturbanceTimeToDeadTime;
      expect(ratio, `seed ${seed}`).not.toBeNull();
      expect(r.harrisIndex, `seed ${seed}`).not.toBeNull();
      // Hägglund's idle index is for load disturbances: not taken when the set point moves.
      expect(r.details.idleIndex, `seed ${seed}`).toBeNull();
      if (sluggish) {
        expect(ratio!, `seed ${seed}`).toBeGreaterThan(15);
        expect(r.diagnosis.label, `seed ${seed}`).toBe("sluggish-tuning");
      } else {
        expect(ratio!, `seed ${seed}`).toBeLessThan(15);
        expect(r.diagnosis.label, `seed ${seed}`).not.toBe("sluggish-tuning");
      }
    }
  });

  it("keeps the constant-set-point stretches when the set point stays put (no caution)", () => {
    const cfg = parseLoopConfig(flowLoopJson("FIC-318", { deadTimeS: 3 }, { kp: 2.9, ti: 20 }));
    const r = assessLoop(simulateLoop({ seed: 3, n: 6000, kp: 2.9, ti: 20 }), cfg);
    expect(r.cautions.some((c) => c.startsWith("The set point moves nearly all the time"))).toBe(false);
    expect(r.harrisIndex).not.toBeNull();
  });
});

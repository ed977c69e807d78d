/**
 * The disturbance-response time constant (closed-loop.ts) and its use against the dead time
 * (diagnosis.ts). Checks:
 * - an AR(1) error e_k = p·e_{k−1} + a_k with p = e^{−T/τ} gives τ back (the zero-order-hold pole
 *   map z = e^{sT}; common practice), over 20 seeds;
 * - on the simulated first-order loop of loop-sim.ts (K = 1, τ = 20 s, dead time 3 s), SIMC tuning
 *   at τc = θ (Skogestad, J. Process Control 13, 2003; from memory) answers its disturbances within
 *   a few dead times, while a gain 20 times lower with Ti = 100 s has a slow closed-loop root:
 *   2000 s² + 115 s + 0.15 = 0 gives s ≈ −0.0013 /s, τ ≈ 750 s (250 dead times); over 10 seeds.
 */
import { describe, expect, it } from "vitest";
import { assessLoop, parseLoopConfig } from "@/lib/assessment";
import { disturbanceResponse, disturbanceTimeConstantS } from "@/lib/assessment/closed-loop";
import { mulberry32, normal } from "../helpers/seeded-random";
import { flowLoopJson, simulateLoop } from "./loop-sim";

describe("disturbance-response time constant", () => {
  // The least-squares AR(1) pole has a standard error √((1 − p²)/N) (Box & Jenkins, common
  // practice); dτ/τ = dp·τ/(T·p), so three standard errors bound each seed.
  it("recovers τ of an AR(1) error within three standard errors in 20 of 20 seeds (z = e^{−T/τ})", () => {
    const T = 1;
    const tau = 25;
    const p = Math.exp(-T / tau);
    for (let seed = 1; seed <= 20; seed++) {
      const rnd = normal(mulberry32(seed));
      const n = 20_000;
      const e = new Float64Array(n);
      for (let k = 1; k < n; k++) e[k] = p * e[k - 1]! + rnd();
      const got = disturbanceTimeConstantS(disturbanceResponse(e, [[0, n]], T, T, 1), T);
      expect(got, `seed ${seed}`).not.toBeNull();
      const bound = (3 * Math.sqrt((1 - p * p) / n) * tau) / (T * p);
      expect(Math.abs(got! / tau - 1), `seed ${seed}: ${got}`).toBeLessThan(bound);
    }
  });

  // Block means of an AR(1) series over d samples keep its pole as q = p^d (an ARMA(1,1) in the
  // blocks, which the AIC-ordered AR model approximates); with 400 blocks the estimate scatters by
  // about a third (seen: 131–373 s for τ = 200 s), so the check is within a factor of 2 — the
  // limits it feeds (5 and 15 dead times) are a factor of 3 apart.
  it("lowers a decimation factor that would leave too few blocks (a long integral time): τ of an AR(1) error within a factor of 2 in 10 of 10 seeds, not null", () => {
    const tau = 200;
    const n = 40_000;
    const p = Math.exp(-1 / tau);
    for (let seed = 1; seed <= 10; seed++) {
      const rnd = normal(mulberry32(seed));
      const e = new Float64Array(n);
      for (let k = 1; k < n; k++) e[k] = p * e[k - 1]! + rnd();
      // asked for blocks of 4,000 samples (10 blocks, too few for a model of order up to 10); the
      // factor is lowered to 40,000 / (40 · 10) = 100
      const model = disturbanceResponse(e, [[0, n]], 1, 1, 4000);
      expect(model, `seed ${seed}`).toEqual(disturbanceResponse(e, [[0, n]], 1, 1, 100));
      const got = disturbanceTimeConstantS(model, 1);
      expect(got, `seed ${seed}`).not.toBeNull();
      expect(Math.abs(Math.log(got! / tau)), `seed ${seed}: ${got}`).toBeLessThan(Math.log(2));
    }
  });

  it("is null without a stable pole", () => {
    expect(disturbanceTimeConstantS(null, 1)).toBeNull();
    expect(disturbanceTimeConstantS({ poles: [], spectralRadius: 1, decayRatio: null, order: 1, droppedNegativeReal: 0 }, 1)).toBeNull();
  });

  it.each([
    { name: "SIMC tuning (kp 2.9, Ti 20 s) stays within 15 dead times", kp: 2.9, ti: 20, below: true },
    { name: "a gain 20 times lower with Ti 100 s exceeds 15 dead times", kp: 0.15, ti: 100, below: false },
  ])("$name (10 seeds)", ({ kp, ti, below }) => {
    const cfg = parseLoopConfig(flowLoopJson("FIC-204", { deadTimeS: 3, controller: { kp, ti, mvLo: 0, mvHi: 100 } }));
    for (let seed = 1; seed <= 10; seed++) {
      const r = assessLoop(simulateLoop({ seed, n: 6000, kp, ti }), cfg);
      const ratio = r.details.disturbanceTimeToDeadTime;
      expect(ratio, `seed ${seed}`).not.toBeNull();
      if (below) expect(ratio!, `seed ${seed}`).toBeLessThan(15);
      else expect(ratio!, `seed ${seed}`).toBeGreaterThan(15);
    }
  });

  it("is null without a configured dead time", () => {
    const r = assessLoop(simulateLoop({ seed: 1, n: 6000, kp: 0.15, ti: 100 }), parseLoopConfig(flowLoopJson("FIC-204", { deadTimeS: null }, { kp: 0.15, ti: 100 })));
    expect(r.details.disturbanceTimeToDeadTime).toBeNull();
  });
});

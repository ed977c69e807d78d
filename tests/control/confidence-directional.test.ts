/**
 * Pole-radius confidence with the default online estimator (ArxEstimator: RLS, lambda = 0.995,
 * directional forgetting, tracked operating point, excitation gating): Monte Carlo coverage of
 * the 95 % intervals (delta method, lib/control/confidence.ts) at 500 samples and in steady
 * state (3,000 samples). The truth is the simulated plant A = 1 - 1.5 q^-1 + 0.7 q^-2 (poles
 * 0.75 +- 0.3708j, radius sqrt(0.7) by Vieta), B = 0.5 + 0.3 q^-1, white MV, white equation
 * error (ARX, so least squares is consistent; Ljung, System Identification, 1999, sec. 7.3).
 * Target band 93-97 %; with the steady-state factor 1/(1 + lambda) of exponential forgetting the
 * coverage was 90.3 % at 500 samples (measured on these seeds).
 */
import { describe, expect, it } from "vitest";
import { arxRadiusCoverage as coverage } from "./coverage-mc";

describe("pole-radius intervals with lambda = 0.995 and directional forgetting (defaults)", () => {
  it("cover the true radius 93-97 % of the time after 500 samples (1,000 runs; binomial sd 0.7 %)", () => {
    const c = coverage(1000, 500, 4743);
    expect(c).toBeGreaterThanOrEqual(0.93);
    expect(c).toBeLessThanOrEqual(0.97);
  });

  it("cover the true radius 93-97 % of the time in steady state, 3,000 samples (600 runs; binomial sd 0.9 %)", () => {
    const c = coverage(600, 3000, 7244);
    expect(c).toBeGreaterThanOrEqual(0.93);
    expect(c).toBeLessThanOrEqual(0.97);
  });
});

/**
 * Checks of the rim-forecast Monte Carlo harness's truth (tests/control/forecast-tracker-mc.ts):
 * the true spectral radius comes from the simulator's own closed-loop state matrix, so the
 * scheduled drift must put it at 0.90, 0.95 and 1.0 at the start, half way and end of the drift (10 h, and the
 * 5 h and 20 h drifts the rate check uses), and the simulator's
 * gain creep to the full headroom must reach the rim exactly at the end of its ramp (the
 * drift's definition in simulators/scenario.ts). One short tracked run shows the harness reads
 * a forecast at all. The coverage figures themselves are statistics: `npm run bench` prints them.
 */
import { describe, expect, it } from "vitest";
import { DRIFT_S, forecastThroughTracker, makeSim, radiusAt, trueCrossing } from "./forecast-tracker-mc";

describe("rim-forecast harness truth", () => {
  it("schedules the gain so that the true radius runs 0.90 -> 1.0 linearly over the drift (10 h, 5 h, 20 h)", () => {
    for (const driftS of [DRIFT_S, DRIFT_S / 2, 2 * DRIFT_S]) {
      const sim = makeSim("linear-radius", 1, driftS);
      for (const [x, r] of [[0, 0.9], [0.25, 0.925], [0.5, 0.95], [1, 1]] as const) {
        expect(radiusAt(sim, sim.gainFactor(x * driftS))).toBeCloseTo(r, 3);
      }
      expect(trueCrossing(sim, driftS)! / driftS).toBeCloseTo(1, 3);
    }
  });

  it("finds the simulator's gain creep to full headroom on the rim at the end of its ramp, and no crossing without drift", () => {
    for (const driftS of [DRIFT_S, DRIFT_S / 2, 2 * DRIFT_S]) {
      expect(trueCrossing(makeSim("gain-creep", 1, driftS), driftS)! / driftS).toBeCloseTo(1, 4);
    }
    expect(trueCrossing(makeSim("no-drift", 1))).toBeNull();
  });

  it("reads a radius-one forecast from the tracker at half way on a drifting run", () => {
    const m = forecastThroughTracker("linear-radius", 1, 9100);
    expect(m.forecasts).toBe(1);
    expect(Number.isFinite(m.medianError)).toBe(true);
  }, 120_000);
});

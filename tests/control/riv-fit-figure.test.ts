/**
 * The tracker's fit figure, 1 − √(residual variance / output variance), reads both variances over
 * the same samples with the same weights (InstrumentalArxEstimator.residualVariance and
 * outputVariance). Before 2026-12-04 the output variance was a running variance of PV over another
 * window, and healthy demo loops read fits of −100 % while tracking.
 *
 * Checks against outside references:
 * - outputVariance equals numpy's weighted variance (np.average with weights w^(n-1-k)) of the same
 *   samples (the estimator updates both sums from its first solve, so the reference takes the same samples);
 * - for the true-model ARX(1,1) y(k) = 0.8 y(k−1) + 0.5 u(k−1) + e(k), u and e white (sd 1 and 0.1),
 *   the stationary output variance is (0.5²·1 + 0.1²) / (1 − 0.8²) = 0.7222 and the residual variance
 *   0.01 (textbook variance of a first-order filter of white noise, common practice), so the fit of a
 *   converged estimate is 1 − √(0.01 / 0.7222) = 0.882.
 */
import { execFileSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { InstrumentalArxEstimator } from "@/lib/control/riv";
import { mulberry32, normal } from "../helpers/seeded-random";
import { PYTHON } from "../helpers/python";

function run(n: number, seed: number, offset = 0) {
  const g = normal(mulberry32(seed));
  const est = new InstrumentalArxEstimator({ na: 1, nb: 1, nk: 1, residualMemory: 0.995 });
  let y0 = 0;
  let uPrev = 0;
  const ys: number[] = [];
  const solvedAt: boolean[] = [];
  for (let k = 0; k < n; k++) {
    const yk = 0.8 * y0 + 0.5 * uPrev + 0.1 * g();
    const uk = g();
    const wasSolved = est.solved;
    est.push(uk, yk + offset, 0, "open");
    ys.push(yk + offset);
    solvedAt.push(wasSolved);
    y0 = yk;
    uPrev = uk;
  }
  return { est, ys, solvedAt };
}

describe("the fit figure's two variances", () => {
  it("outputVariance is numpy's weighted variance of the samples the residual sums hold", () => {
    const { est, ys, solvedAt } = run(1500, 11, 3);
    const used = ys.filter((_, k) => solvedAt[k]);
    expect(used.length).toBeGreaterThan(1000);
    const py = `
import json, sys, numpy as np
y = np.array(json.load(sys.stdin)); n = len(y); w = 0.995 ** np.arange(n - 1, -1, -1)
m = np.average(y, weights=w)
print(json.dumps(float(np.average((y - m) ** 2, weights=w))))`;
    const ref = JSON.parse(execFileSync(PYTHON, ["-c", py], { input: JSON.stringify(used) }).toString()) as number;
    expect(est.outputVariance()).toBeCloseTo(ref, 9);
  });

  it("a converged estimate of a known ARX(1,1) reads the analytic fit 0.882 (20 seeds, within 0.03)", () => {
    const fits: number[] = [];
    for (let seed = 1; seed <= 20; seed++) {
      const { est } = run(6000, 100 + seed);
      fits.push(1 - Math.sqrt(est.residualVariance() / est.outputVariance()));
    }
    const mean = fits.reduce((a, b) => a + b, 0) / fits.length;
    expect(Math.abs(mean - (1 - Math.sqrt(0.01 / 0.7222)))).toBeLessThan(0.03);
    for (const f of fits) expect(f).toBeGreaterThan(0.8);
  });

  it("a state saved before the output sums restores and starts them afresh", () => {
    const { est } = run(800, 7);
    const json = est.toJSON() as unknown as Record<string, unknown>;
    delete json.ySum;
    delete json.ySquares;
    delete json.yWeight;
    const back = InstrumentalArxEstimator.fromJSON(json as never);
    expect(Number.isNaN(back.outputVariance())).toBe(true);
    expect(back.residualVariance()).toBeCloseTo(est.residualVariance(), 12);
  });
});

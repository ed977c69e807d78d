/**
 * The gain-drift restriction of the linear drift fit (lib/control/drift-restriction.ts). Sources:
 * the chi-square quantile against scipy.stats.chi2.ppf; the minimum-distance restriction against
 * the same formula evaluated by numpy.linalg (x_r = x - C R' (R C R')^-1 R x, Newey & McFadden,
 * Handbook of Econometrics vol. 4, 1994, ch. 36 sec. 5, from memory); by Monte Carlo, the
 * definition of a confidence interval (a 95 % interval holds the truth in about 95 % of runs) and
 * of a test's level (a 1 % test rejects a true restriction in about 1 % of runs).
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { chiSquareQuantile, restrictPoleDrift } from "@/lib/control/drift-restriction";
import { LinearDriftIv, type DriftEstimate } from "@/lib/control/parameter-drift";
import { mulberry32, normal } from "../helpers/seeded-random";
import { PYTHON, pythonHas } from "../helpers/python";

const hasScipy = pythonHas("scipy, numpy");

function python(script: string, input: unknown): unknown {
  const run = spawnSync(PYTHON, ["-c", script], { input: JSON.stringify(input), encoding: "utf8" });
  if (run.status !== 0) throw new Error(run.stderr);
  return JSON.parse(run.stdout);
}

/**
 * A first-order ARX plant under proportional feedback, y(k) = -a(t) y(k-1) + b(t) u(k-1) + e(k),
 * u(k) = -0.8 y(k) + r(k), r and e white (sd 0.3 and 0.2), t = k seconds: least squares is
 * consistent here (white equation error, past regressors), and the feedback correlates the
 * estimates of a and b. Returns the drift fit over all samples.
 */
function closedLoopFit(seed: number, n: number, aRate: number, bRate: number): DriftEstimate {
  const rand = normal(mulberry32(seed));
  const fit = new LinearDriftIv({ d: 2, window: 10 * n, block: n / 20 });
  let y1 = 0, u1 = 0;
  for (let k = 0; k < n; k++) {
    const a = -0.7 + aRate * k, b = 0.5 + bRate * k;
    const y = -a * y1 + b * u1 + 0.2 * rand();
    const phi = [-y1, u1];
    fit.add(k, phi, phi, y);
    u1 = -0.8 * y + 0.3 * rand();
    y1 = y;
  }
  return fit.estimate()!;
}

describe("chiSquareQuantile", () => {
  it.skipIf(!hasScipy)("is exact (1, 2) or within 1 % of scipy.stats.chi2.ppf at 0.95 and 0.99, 1 to 8 degrees of freedom", () => {
    const ref = python("import json, sys; from scipy.stats import chi2; print(json.dumps([[chi2.ppf(p, k) for k in range(1, 9)] for p in (0.95, 0.99)]))", null) as number[][];
    [0.95, 0.99].forEach((p, i) => {
      for (let k = 1; k <= 8; k++) expect(Math.abs(chiSquareQuantile(p, k) / ref[i]![k - 1]! - 1)).toBeLessThan(0.01);
    });
  });
});

describe("restrictPoleDrift", () => {
  it.skipIf(!hasScipy)("gives the minimum-distance restriction numpy computes, and the estimate unchanged when the Wald test rejects it", () => {
    // d = 3 (na = 2, nb = 1): a seeded positive-definite covariance M M' / 6 + I / 100
    const rand = normal(mulberry32(77));
    const p = 6;
    const M = Array.from({ length: p * p }, () => rand());
    const C = new Float64Array(p * p);
    for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) {
      let s = i === j ? 0.01 : 0;
      for (let l = 0; l < p; l++) s += (M[i * p + l]! * M[j * p + l]!) / 6;
      C[i * p + j] = s;
    }
    const est = (rateA: number): DriftEstimate => ({ t: 10, tFirst: 0, samples: 100, theta: Float64Array.of(-0.9, 0.2, 0.4), rate: Float64Array.of(rateA, -0.5 * rateA, 0.3), covariance: C });
    const ref = python(
      [
        "import json, sys, numpy as np",
        "d = json.load(sys.stdin); C = np.array(d['C']).reshape(6, 6); x = np.array(d['x'])",
        "R = np.zeros((2, 6)); R[0, 3] = 1; R[1, 4] = 1",
        "W = np.linalg.inv(R @ C @ R.T); K = C @ R.T @ W",
        "print(json.dumps({'x': (x - K @ R @ x).tolist(), 'C': (C - K @ R @ C).flatten().tolist(), 'wald': float(x @ R.T @ W @ R @ x)}))",
      ].join("\n"),
      { C: [...C], x: [-0.9, 0.2, 0.4, 0.1, -0.05, 0.3] },
    ) as { x: number[]; C: number[]; wald: number };
    const r = restrictPoleDrift(est(0.1), 2);
    expect(r.restricted).toBe(true);
    expect(r.wald).toBeCloseTo(ref.wald, 10);
    const x = [...r.estimate.theta, ...r.estimate.rate];
    for (let i = 0; i < p; i++) expect(x[i]!).toBeCloseTo(ref.x[i]!, 10);
    for (let i = 0; i < p * p; i++) expect(r.estimate.covariance[i]!).toBeCloseTo(ref.C[i]!, 10);
    // a rate of a far beyond its sd: the free estimate is kept
    const big = restrictPoleDrift(est(30), 2);
    expect(big.wald).toBeGreaterThan(chiSquareQuantile(0.99, 2));
    expect(big.restricted).toBe(false);
    expect(big.estimate.rate[0]).toBe(30);
  });

  it("narrows a gain drift's rate in closed loop, keeps its 95 % interval's coverage, and lets a real drift of the pole through", () => {
    // 300 runs of 3,000 samples; binomial sd of a 95 % share over 300 runs: 1.3 points
    const runs = 300, bRate = 2e-5;
    let coveredR = 0, rejected = 0, sumR = 0;
    const errR: number[] = [], errF: number[] = [];
    // the closed-loop pole -(a + 0.8 b) (arithmetic): its rate's error, restricted and free
    const poleR: number[] = [], poleF: number[] = [];
    let predicted = 0;
    for (let r = 0; r < runs; r++) {
      const est = closedLoopFit(5000 + r, 3000, 0, bRate);
      const res = restrictPoleDrift(est, 1);
      // the restriction's own prediction of the narrowing: sqrt(1 - corr(a rate, b rate)^2)
      const C = est.covariance;
      predicted += Math.sqrt(1 - C[2 * 4 + 3]! ** 2 / (C[2 * 4 + 2]! * C[3 * 4 + 3]!)) / runs;
      if (!res.restricted) rejected++;
      const eR = res.estimate.rate[1]! - bRate, eF = est.rate[1]! - bRate;
      errR.push(eR);
      errF.push(eF);
      poleR.push(-(res.estimate.rate[0]! + 0.8 * res.estimate.rate[1]!) + 0.8 * bRate);
      poleF.push(-(est.rate[0]! + 0.8 * est.rate[1]!) + 0.8 * bRate);
      sumR += eR;
      if (Math.abs(eR) <= 1.959964 * Math.sqrt(res.estimate.covariance[3 * 4 + 3]!)) coveredR++;
    }
    const sd = (e: number[]) => Math.sqrt(e.reduce((s, v) => s + v * v, 0) / e.length);
    expect(coveredR / runs).toBeGreaterThan(0.92);
    expect(coveredR / runs).toBeLessThan(0.98);
    expect(Math.abs(sumR / runs)).toBeLessThan((3 * sd(errR)) / Math.sqrt(runs));
    expect(rejected / runs).toBeLessThan(0.04);
    // measured against the truth: narrower (0.85 here), by what the covariance predicts (within 10 %)
    expect(sd(errR) / sd(errF)).toBeLessThan(0.9);
    expect(Math.abs(sd(errR) / sd(errF) / predicted - 1)).toBeLessThan(0.1);
    // the pole's rate, which the rim forecast uses, loses the free rate of a's noise (0.63 measured)
    expect(sd(poleR) / sd(poleF)).toBeLessThan(0.75);
    // the pole drifts (a from -0.7 to -0.4, about 7 sd of its rate): the test rejects the restriction
    let kept = 0;
    for (let r = 0; r < 100; r++) if (!restrictPoleDrift(closedLoopFit(6000 + r, 3000, 1e-4, bRate), 1).restricted) kept++;
    expect(kept).toBeGreaterThan(90);
  });
});

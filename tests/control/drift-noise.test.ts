/**
 * The drift fit's estimated noise model (lib/control/drift-noise.ts). Sources: Levinson–Durbin
 * solves the Yule–Walker equations, checked against scipy.linalg.solve_toeplitz of the same
 * autocovariances; that whitening the data by the inverse noise filter lowers the variance of an
 * instrumental-variable estimate under coloured equation noise is Söderström & Stoica, *System
 * Identification*, 1989, ch. 8 (the optimal IV prefilter; from memory), measured here by seeded
 * Monte Carlo; the interval's coverage by the definition of a 95 % confidence interval.
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { levinsonDurbin } from "@/lib/control/drift-noise";
import { LinearDriftIv } from "@/lib/control/parameter-drift";
import { mulberry32, normal } from "../helpers/seeded-random";
import { PYTHON, pythonHas } from "../helpers/python";

const hasScipy = pythonHas("scipy.linalg");

/**
 * y(k) = -a(t) y(k-1) + 0.5 u(k-1) + v(k), a(t) = -0.8 + rate k, white u, equation noise AR(2):
 * v(k) = 1.5 v(k-1) - 0.7 v(k-2) + 0.1 w(k). Instruments: the noise-free regressor [-x(k-1), u(k-1)]
 * of the true drifting model (open loop; the tracker's auxiliary-model instruments). Returns the
 * estimated rate of a and its sd.
 */
function runOnce(seed: number, n: number, rate: number, order: number, settle = 0): { rate: number; sd: number; a: Float64Array; updates: number; samples: number } {
  const rand = normal(mulberry32(seed));
  const f = new LinearDriftIv({ d: 2, window: 10 * n, block: n / 10, lags: 3, ...(order > 0 ? { noise: { order, samples: n / 5, settle } } : {}) });
  let y1 = 0, x1 = 0, u1 = 0, v1 = 0, v2 = 0;
  for (let k = 0; k < n; k++) {
    const v = 1.5 * v1 - 0.7 * v2 + 0.1 * rand();
    const a = -0.8 + rate * k;
    const x = -a * x1 + 0.5 * u1;
    const y = -a * y1 + 0.5 * u1 + v;
    f.add(k, [-y1, u1], [-x1, u1], y);
    const u = rand();
    u1 = u;
    x1 = x;
    y1 = y;
    v2 = v1;
    v1 = v;
  }
  const est = f.estimate()!;
  return { rate: est.rate[0]!, sd: Math.sqrt(est.covariance[2 * 4 + 2]!), samples: est.samples, ...f.noiseModel };
}

describe("drift noise model", () => {
  it.skipIf(!hasScipy)("Levinson–Durbin solves the Yule–Walker equations as scipy.linalg.solve_toeplitz does", () => {
    const r = [2.0, 1.4, 0.7, 0.15, -0.2];
    const a = levinsonDurbin(r, 4)!;
    const run = spawnSync(PYTHON, ["-c", "import json, sys, scipy.linalg as L; r = json.load(sys.stdin); print(json.dumps((-L.solve_toeplitz(r[:4], r[1:])).tolist()))"], { input: JSON.stringify(r), encoding: "utf8" });
    expect(run.status, run.stderr).toBe(0);
    const ref = JSON.parse(run.stdout) as number[];
    for (let i = 0; i < 4; i++) expect(a[i]!).toBeCloseTo(ref[i]!, 10);
    // AR(1) with coefficient 0.6: r_l = 0.6^l / (1 - 0.36), a_1 = -0.6, higher ones 0 (arithmetic)
    const ar1 = levinsonDurbin([1, 0.6, 0.36, 0.216].map((x) => x / 0.64), 3)!;
    expect(ar1[0]!).toBeCloseTo(-0.6, 12);
    expect(Math.abs(ar1[1]!) + Math.abs(ar1[2]!)).toBeLessThan(1e-12);
    expect(levinsonDurbin([0, 0, 0], 2)).toBeNull();
  });

  it("estimates the AR(2) equation noise from the drift fit's residuals, refitted at every block", () => {
    // the simulated v(k) = 1.5 v(k-1) - 0.7 v(k-2) + w(k): A_n(q) = 1 - 1.5 q^-1 + 0.7 q^-2
    const { a, updates } = runOnce(4321, 4000, 4e-5, 2);
    expect(updates).toBe(9);
    expect(a[0]!).toBeCloseTo(-1.5, 1);
    expect(a[1]!).toBeCloseTo(0.7, 1);
  });

  it("whitened by the estimated AR noise model, the drift rate's sd falls by 40 % or more under AR(2) equation noise, and its interval still covers about 95 %", () => {
    // 200 seeded runs of 4,000 samples each; binomial sd of a 95 % share over 200 runs is 1.5 points
    const runs = 200, n = 4000, truth = 4e-5;
    const stats = (order: number, settle = 0) => {
      const errs: number[] = [];
      let covered = 0;
      for (let r = 0; r < runs; r++) {
        const e = runOnce(7000 + r, n, truth, order, settle);
        errs.push(e.rate - truth);
        if (Math.abs(e.rate - truth) <= 1.959964 * e.sd) covered++;
      }
      const mean = errs.reduce((s, x) => s + x, 0) / runs;
      const sd = Math.sqrt(errs.reduce((s, x) => s + (x - mean) ** 2, 0) / (runs - 1));
      return { mean, sd, coverage: covered / runs };
    };
    const raw = stats(0);
    const white = stats(4);
    // 200 runs of a variant: sd 1.00e-5 raw, 4.2e-6 whitened, 3.7e-6 with the true filter from the start
    expect(white.sd).toBeLessThan(0.6 * raw.sd);
    expect(white.coverage).toBeGreaterThan(0.91);
    expect(white.coverage).toBeLessThan(0.985);
    // no bias: the mean error within 3 standard errors of zero
    expect(Math.abs(white.mean)).toBeLessThan((3 * white.sd) / Math.sqrt(runs));
    // the first model only after 600 residual samples (a settled drift estimate, as the tracker's
    // default, docs/domain.md §7; every sample since the start re-filtered): the same gain and an
    // interval as well calibrated
    const settled = stats(4, 600);
    expect(settled.sd).toBeLessThan(0.6 * raw.sd);
    expect(settled.coverage).toBeGreaterThan(0.91);
    expect(settled.coverage).toBeLessThan(0.985);
    expect(Math.abs(settled.mean)).toBeLessThan((3 * settled.sd) / Math.sqrt(runs));
  });

  it("the first model re-filters every sample kept since the start, so its restart of the sums loses none of them", () => {
    // all 4,000 samples informative and joined: the window holds all but the filter's first `order`
    // (arithmetic: the filter needs `order` past samples, so blocks of 400 start at samples 2, 402,
    // ...); the first model at the first block boundary with 300 residuals kept (sample 402), then
    // one at every later boundary: 9 models
    const e = runOnce(4321, 4000, 4e-5, 2, 300);
    expect(e.samples).toBe(4000 - 2);
    expect(e.updates).toBe(9);
    // the ring keeps 800 (n / 5): a first model at 802 samples, later than it reaches back, starts
    // the sums afresh there (the filter keeps its past, so from that sample on): 4000 - 802
    const late = runOnce(4321, 4000, 4e-5, 2, 700);
    expect(late.updates).toBe(8);
    expect(late.samples).toBe(4000 - 802);
  });
});

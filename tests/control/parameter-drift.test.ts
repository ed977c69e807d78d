/**
 * The linear parameter drift estimator (lib/control/parameter-drift.ts) and the crossing drawn
 * from it (lib/control/drift-crossing.ts). Sources: the time-varying-parameter regression
 * theta(t) = theta0 + theta1 t is Ljung, *System Identification*, 2nd ed., 1999, sec. 16.1
 * (from memory); the estimate is checked against numpy.linalg.solve of the same normal
 * equations; the interval's coverage by Monte Carlo (a 95 % interval holds the truth in about
 * 95 % of runs: the definition of a confidence interval); the crossing of a closed loop whose
 * pole is known in closed form (a first-order ARX plant under a proportional controller,
 * z = -(a + b k): arithmetic).
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { LinearDriftIv, type DriftEstimate } from "@/lib/control/parameter-drift";
import { driftCrossing } from "@/lib/control/drift-crossing";
import { mulberry32, normal } from "../helpers/seeded-random";
import { PYTHON, pythonHas } from "../helpers/python";

const hasNumpy = pythonHas("numpy");

interface Sample { t: number; phi: number[]; z: number[]; y: number }

/**
 * y(k) = -a(t) y(k-1) + b u(k-1) + v(k), a(t) = a0 + aRate t (t = k seconds), b = 0.5, white u.
 * v = e(k) + c e(k-1) (c = 0: white). Instruments: z = phi when c = 0 (least squares), else the
 * delayed inputs [u(k-1), u(k-2)] (open loop: uncorrelated with v).
 */
function simulate(seed: number, n: number, a0: number, aRate: number, c: number): Sample[] {
  const rand = normal(mulberry32(seed));
  const out: Sample[] = [];
  let y1 = 0, u1 = 0, u2 = 0, e1 = 0;
  for (let k = 0; k < n; k++) {
    const e = 0.2 * rand();
    const a = a0 + aRate * k;
    const y = -a * y1 + 0.5 * u1 + e + c * e1;
    const phi = [-y1, u1];
    out.push({ t: k, phi, z: c === 0 ? phi : [u1, u2], y });
    const u = rand();
    u2 = u1;
    u1 = u;
    y1 = y;
    e1 = e;
  }
  return out;
}

function fit(samples: Sample[], window: number, lags: number, block?: number): DriftEstimate {
  const f = new LinearDriftIv({ d: 2, window, lags, ...(block ? { block } : {}) });
  for (const s of samples) f.add(s.t, s.phi, s.z, s.y);
  return f.estimate()!;
}

describe("LinearDriftIv", () => {
  it.skipIf(!hasNumpy)("solves the same instrumental-variable normal equations as numpy.linalg.solve, over the window, across a move of the time origin", () => {
    // 6,000 samples, window 1,000 s: the origin moves (past 4 windows) and old blocks drop out
    const samples = simulate(11, 6000, -0.7, -2e-5, 0.5);
    const est = fit(samples, 1000, 0, 50);
    const used = samples.filter((s) => s.t >= est.tFirst && s.t <= est.t);
    expect(used.length).toBe(est.samples);
    const script = [
      "import json, sys, numpy as np",
      "d = json.load(sys.stdin); t = np.array(d['t']) - d['tl']",
      "P = np.array(d['phi']); Z = np.array(d['z']); y = np.array(d['y'])",
      "PP = np.hstack([P, t[:, None] * P]); ZZ = np.hstack([Z, t[:, None] * Z])",
      "x = np.linalg.solve(ZZ.T @ PP, ZZ.T @ y); e = y - PP @ x; n = len(y)",
      "Ai = np.linalg.inv(ZZ.T @ PP); C = Ai @ ((e @ e / n) * (ZZ.T @ ZZ)) @ Ai.T * n / (n - 4)",
      "print(json.dumps({'x': x.tolist(), 'C': C.tolist()}))",
    ].join("\n");
    const input = JSON.stringify({ t: used.map((s) => s.t), tl: est.t, phi: used.map((s) => s.phi), z: used.map((s) => s.z), y: used.map((s) => s.y) });
    const run = spawnSync(PYTHON, ["-c", script], { input, encoding: "utf8", maxBuffer: 16 * 1024 * 1024 });
    expect(run.status, run.stderr).toBe(0);
    const ref = JSON.parse(run.stdout) as { x: number[]; C: number[][] };
    for (let i = 0; i < 2; i++) {
      expect(est.theta[i]!).toBeCloseTo(ref.x[i]!, 9);
      expect(est.rate[i]! / ref.x[2 + i]! - 1).toBeLessThan(1e-7);
    }
    // lags 0: the sandwich with the residual variance; the same in numpy
    for (let i = 0; i < 4; i++) for (let j = 0; j < 4; j++) expect(Math.abs(est.covariance[i * 4 + j]! / ref.C[i]![j]! - 1)).toBeLessThan(1e-6);
  });

  it("covers a linear parameter drift in about 95 % of runs, white noise (least squares) and MA(1) noise (IV, Newey-West lags)", () => {
    // 400 runs of 2,000 samples each; binomial sd of a 95 % share over 400 runs is 1.1 points
    for (const [c, lags] of [[0, 0], [0.8, 3]] as const) {
      let covered = 0, sumErr = 0;
      const runs = 400;
      const truth = 4e-5;
      const rateErrors: number[] = [];
      for (let r = 0; r < runs; r++) {
        const est = fit(simulate(1000 + r, 2000, -0.8, truth, c), 5000, lags);
        const sd = Math.sqrt(est.covariance[2 * 4 + 2]!);
        if (Math.abs(est.rate[0]! - truth) <= 1.959964 * sd) covered++;
        sumErr += est.rate[0]! - truth;
        rateErrors.push(est.rate[0]! - truth);
      }
      const meanErr = sumErr / runs;
      const sdErr = Math.sqrt(rateErrors.reduce((s, e) => s + (e - meanErr) ** 2, 0) / (runs - 1));
      expect(covered / runs).toBeGreaterThan(0.92);
      expect(covered / runs).toBeLessThan(0.98);
      // no bias: the mean error within 3 standard errors of zero
      expect(Math.abs(meanErr)).toBeLessThan((3 * sdErr) / Math.sqrt(runs));
    }
  });
});

describe("driftCrossing", () => {
  // ARX(1,1,1) under u = k e: characteristic z + a + b k, one real pole -(a + b k) (arithmetic)
  const controller = { num: [2], den: [1], T: 1 };
  const structure = { na: 1, nb: 1, nk: 1 };
  /** a(t) = -0.6 - 1e-5 t, b = 0.1: pole 0.4 + 1e-5 t, radius 1 at 60,000 s after t_last. */
  function estimate(covariance: number[]): DriftEstimate {
    return { t: 1000, tFirst: 0, samples: 1000, theta: Float64Array.of(-0.6, 0.1), rate: Float64Array.of(-1e-5, 0), covariance: Float64Array.from(covariance) };
  }

  it("finds the exact crossing of a noise-free drift", () => {
    const zero = new Array<number>(16).fill(0);
    zero[10] = 1e-30; // a rate known to 1e-15 /s: significant
    const f = driftCrossing(estimate(zero), structure, controller, { maxHorizon: 1e6 })!;
    expect(f.radius).toBeCloseTo(0.4, 12);
    expect(f.slope).toBeCloseTo(1e-5, 9);
    expect(f.at).toBeCloseTo(1000 + 60000, 2);
    expect(f.low).toBeCloseTo(f.at, 2);
    expect(f.high).toBeCloseTo(f.at, 2);
    // beyond the horizon: nothing
    expect(driftCrossing(estimate(zero), structure, controller, { maxHorizon: 50000 })).toBeNull();
  });

  it("gives the Fieller interval of the pole's line, from the parameters' covariance", () => {
    // pole = -(a + 2 b): var(pole now) = va + 4 vb; var(rate) = v(a rate); no cross terms
    const va = 1e-4, vr = 4e-12;
    const C = new Array<number>(16).fill(0);
    C[0] = va;
    C[10] = vr;
    const f = driftCrossing(estimate(C), structure, controller, { maxHorizon: 1e6 })!;
    const q = 1.959964, beta = 1e-5, gap = 0.6;
    // (beta t - gap)^2 = q^2 (va + t^2 vr): the two roots by the quadratic formula
    const A2 = beta * beta - q * q * vr, A1 = -2 * gap * beta, A0 = gap * gap - q * q * va;
    const s = Math.sqrt(A1 * A1 - 4 * A2 * A0);
    expect(f.low - 1000).toBeCloseTo((-A1 - s) / (2 * A2), 0);
    expect(f.high - 1000).toBeCloseTo((-A1 + s) / (2 * A2), 0);
    expect(f.tStat).toBeCloseTo(beta / Math.sqrt(vr), 6);
  });

  it("is quiet when the rate is not significant or moves away from the rim", () => {
    const C = new Array<number>(16).fill(0);
    C[10] = 1e-10; // rate sd 1e-5: t = 1
    expect(driftCrossing(estimate(C), structure, controller)).toBeNull();
    const away = { ...estimate(new Array<number>(16).fill(0).map((_, i) => (i === 10 ? 1e-30 : 0))), rate: Float64Array.of(1e-5, 0) };
    expect(driftCrossing(away, structure, controller)).toBeNull();
  });
});

/**
 * The drift-shape tool (./drift-shape.ts, ./drift-shape-rules.ts; docs/domain.md §7, "The drift's
 * shape"): the batch polynomial-drift IV fit it rests on. Sources: its degree-1 fit is the
 * tracker's own (lib/control/parameter-drift.ts: the same estimate and covariance, to rounding);
 * its degree-2 point estimate is checked against numpy.linalg.solve of the same normal equations;
 * the IV estimate with a Newey–West covariance is asymptotically normal (Söderström & Stoica,
 * *System Identification*, 1989, sec. 8.2; Newey & West, *Econometrica* 55(3), 1987; from memory),
 * so the curvature's z-statistic is about N(0, 1) around the truth and a Wald test at level α
 * rejects a true zero curvature in about α of runs (the definition of the level); Akaike-weight
 * averaging and its unconditional standard error: Burnham & Anderson, *Model Selection and
 * Multimodel Inference*, 2nd ed., 2002, sec. 4.3 (from memory), checked by hand arithmetic.
 */
import { spawnSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { LinearDriftIv } from "@/lib/control/parameter-drift";
import { polyDriftFit, recordDriftStreams, restrictZero, tangentEstimate, type DriftStream } from "./drift-shape";
import { average, shapeForecasts } from "./drift-shape-rules";
import { simulatedStream } from "./drift-stream-sim";
import { PYTHON, pythonHas } from "../helpers/python";

const hasNumpy = pythonHas("numpy");

/** The tool's synthetic stream with the equation error e(k) + 0.8 e(k-1), sd 0.2 (./drift-stream-sim.ts). */
function simulate(seed: number, n: number, b1: number, b2: number): DriftStream {
  return simulatedStream(seed, n, { b1, b2, sd: 0.2, noise: "equation" });
}

describe("polyDriftFit (the drift-shape tool's batch fit)", () => {
  it("is the tracker's linear drift fit at degree 1: the same estimate and covariance", () => {
    const s = simulate(7, 3000, 0.3, 0);
    const f = polyDriftFit(s, 1)!;
    const ref = new LinearDriftIv({ d: 2, window: s.o.windowS, lags: s.o.lags });
    for (let i = 0; i < s.t.length; i++) ref.add(s.t[i]!, s.v.slice(6 * i, 6 * i + 2), s.v.slice(6 * i + 2, 6 * i + 4), s.v[6 * i + 4]!);
    const want = ref.estimate()!;
    const got = tangentEstimate(f);
    for (let i = 0; i < 2; i++) {
      expect(got.theta[i]! / want.theta[i]! - 1).toBeCloseTo(0, 9);
      expect(got.rate[i]! / want.rate[i]! - 1).toBeCloseTo(0, 7);
    }
    for (let i = 0; i < 16; i++) expect(got.covariance[i]! / want.covariance[i]! - 1).toBeCloseTo(0, 6);
  });

  it.skipIf(!hasNumpy)("solves the same quadratic-drift IV normal equations as numpy.linalg.solve", () => {
    const s = simulate(8, 2000, 0.3, 0.4);
    const f = polyDriftFit(s, 2)!;
    const script = [
      "import json, sys, numpy as np",
      "d = json.load(sys.stdin); v = np.array(d['v']).reshape(-1, 6); tau = (np.array(d['t']) - d['t'][-1]) / d['w']",
      "P = v[:, 0:2]; Z = v[:, 2:4]; y = v[:, 4]",
      "PP = np.hstack([P, tau[:, None] * P, tau[:, None] ** 2 * P]); ZZ = np.hstack([Z, tau[:, None] * Z, tau[:, None] ** 2 * Z])",
      "print(json.dumps(np.linalg.solve(ZZ.T @ PP, ZZ.T @ y).tolist()))",
    ].join("\n");
    const run = spawnSync(PYTHON, ["-c", script], { input: JSON.stringify({ t: s.t, v: s.v, w: s.o.windowS }), encoding: "utf8", maxBuffer: 16 * 1024 * 1024 });
    expect(run.status, run.stderr).toBe(0);
    const ref = JSON.parse(run.stdout) as number[];
    for (let i = 0; i < 6; i++) expect(Math.abs(f.x[i]! - ref[i]!)).toBeLessThan(1e-9 * Math.max(1, Math.abs(ref[i]!)));
  });

  it("recovers a known curvature within its standard errors over 300 seeded runs (z about N(0, 1), 95 % coverage)", () => {
    // b2 = 0.4 over the window; in tau units (tau = (t - t_last) / n, in [-1, 0]) b(tau) = 0.5 +
    // b1 (1 + tau) + b2 (1 + tau)^2, so the tau^2 coefficient of b is b2 and b's index is 5
    const runs = 300, b2 = 0.4;
    const z: number[] = [];
    for (let r = 0; r < runs; r++) {
      const f = polyDriftFit(simulate(2000 + r, 2000, 0.3, b2), 2)!;
      z.push((f.x[5]! - b2) / Math.sqrt(f.P[5 * 6 + 5]!));
    }
    const mean = z.reduce((a, b) => a + b, 0) / runs;
    const sd = Math.sqrt(z.reduce((a, b) => a + (b - mean) ** 2, 0) / (runs - 1));
    // standard error of the mean 0.058: within 3.5 of them; the sd of a unit normal's sample sd over 300 runs is 0.04
    expect(Math.abs(mean)).toBeLessThan(0.2);
    expect(sd).toBeGreaterThan(0.85);
    expect(sd).toBeLessThan(1.2);
    const covered = z.filter((v) => Math.abs(v) <= 1.959964).length / runs;
    expect(covered).toBeGreaterThan(0.9);
    expect(covered).toBeLessThan(0.985);
  });

  it("rejects a zero curvature of a linear drift in about the test's level: 5 % of 400 runs (binomial sd 1.1 points)", () => {
    const runs = 400;
    let at5 = 0, at1 = 0;
    for (let r = 0; r < runs; r++) {
      const f = polyDriftFit(simulate(5000 + r, 2000, 0.3, 0), 2)!;
      const wald = restrictZero(f, [5]).wald;
      if (wald > 3.841459) at5++; // chi-square 1 dof, 95 % (scipy.stats.chi2.ppf(0.95, 1))
      if (wald > 6.634897) at1++; // 99 %
    }
    expect(at5 / runs).toBeGreaterThan(0.02);
    expect(at5 / runs).toBeLessThan(0.085);
    expect(at1 / runs).toBeLessThan(0.03);
  });

  it("restricts a coefficient to zero with the weighted minimum-distance formula: the restricted coefficient is zero, the others move by C R' (R C R')^-1 R x", () => {
    const f = polyDriftFit(simulate(9, 2000, 0.3, 0.2), 2)!;
    const { fit, wald } = restrictZero(f, [4]);
    const c = f.P[4 * 6 + 4]!;
    expect(wald).toBeCloseTo(f.x[4]! ** 2 / c, 10);
    expect(fit.x[4]).toBe(0);
    for (let i = 0; i < 6; i++) if (i !== 4) expect(fit.x[i]! - (f.x[i]! - (f.P[i * 6 + 4]! * f.x[4]!) / c)).toBeCloseTo(0, 12);
  });
});

describe("Akaike-weight average of two forecasts", () => {
  it("weights the points and widens the interval by the models' disagreement (hand arithmetic)", () => {
    // sd = half-width / 1.959964: 100 and 200; points 1000 and 1600; w_B = 0.25
    const q = 1.959964;
    const a = { at: 1000, low: 1000 - q * 100, high: 1000 + q * 100 };
    const b = { at: 1600, low: 1600 - q * 200, high: 1600 + q * 200 };
    const m = average(a, b, 0.25)!;
    expect(m.at).toBeCloseTo(1150, 9);
    // 0.75 sqrt(100^2 + 150^2) + 0.25 sqrt(200^2 + 450^2)
    const u = 0.75 * Math.sqrt(100 ** 2 + 150 ** 2) + 0.25 * Math.sqrt(200 ** 2 + 450 ** 2);
    expect((m.high - m.low) / 2 / (q * u) - 1).toBeCloseTo(0, 6);
    // one model without a forecast: the other's when it carries more than half the weight, else none
    expect(average(a, null, 0.1)).toBe(a);
    expect(average(a, null, 0.9)).toBeNull();
  });
});

describe("recordDriftStreams", () => {
  it("records the tracker's drift-fit samples so that a replay reproduces its forecast (two harness runs)", () => {
    const streams = recordDriftStreams("linear-radius", 2, 9100);
    expect(streams).toHaveLength(2);
    for (const s of streams) {
      expect(s.tracker).not.toBeNull();
      expect(shapeForecasts(s).trackerAgrees).toBe(true);
    }
  }, 120_000);
});

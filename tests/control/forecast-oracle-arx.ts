/**
 * Second oracle for the rim forecast (issue #10, item 3), between the first
 * (tests/control/forecast-oracle.ts: the plant known up to its gain, 2 unknowns) and the tracker:
 * the tracker's own model, ARX with na = 1, nb = 1, nk = 3 and both parameters drifting linearly,
 * theta(t) = theta + rate (t − t_half) (4 unknowns), and the tracker's own crossing
 * (lib/control/drift-crossing.ts, the radius's tangent line and its significance test), but fitted
 * by generalised least squares with the TRUE noise filter instead of instrumental variables
 * without one. The equation error of the ARX model is w = A0(q) v, v the output noise (the load
 * through the plant and the PV noise), so the innovations are e = H⁻¹ A0⁻¹ w with H⁻¹ the Kalman
 * innovations filter of v (forecast-oracle.ts) and A0 the true denominator: fixed at the truth,
 * e(theta) = L y − (L phi)' theta is linear, and least squares of L y on L phi (each scaled by the
 * innovation sd) is consistent in closed loop: the whitened regressors are linear in past data
 * and the whitened error is the linear innovation (Ljung, *System Identification*, 2nd ed., 1999,
 * secs. 7.3, 9.2; Söderström & Stoica, *System Identification*, 1989, ch. 7; from memory). It is
 * not the full prediction-error (Box–Jenkins) fit, whose gradient holds the noise-free output
 * where this regressor holds the noisy past y, so it can only be less efficient than that fit:
 * its spread is measured over the runs, not bounded (on 120 creep runs its rate sds were 1.15 and
 * 1.35 times (L phi)'(L phi)'s inverse; the load's jumps are not Gaussian).
 * With `whiten` false: ordinary least squares on the raw samples (no noise model); `wrong`: a
 * noise filter whose load model is off (forecast-oracle.ts, `noiseFilter`).
 */
import type { DriftEstimate } from "@/lib/control/parameter-drift";
import { driftCrossing } from "@/lib/control/drift-crossing";
import { invert } from "@/lib/control/linalg";
import { DRIFT_S, makeSim, trueCrossing, type ForecastScenario } from "./forecast-tracker-mc";
import { deviations, noiseFilter } from "./forecast-oracle";

const STRUCTURE = { na: 1, nb: 1, nk: 3 };

export interface ArxOracleRun {
  /** The fit at half way (theta there, its rate, their covariance); null if singular. */
  est: DriftEstimate | null;
  /** Relative error of the remaining time at half way (Infinity: no forecast). */
  error: number;
}

/** One seeded run of the harness's scenario, fitted at half way. */
export function arxOracleRun(kind: Exclude<ForecastScenario, "no-drift">, seed: number, whiten = true, driftS = DRIFT_S, wrong = { variance: 1, spacing: 1 }): ArxOracleRun {
  const sim = makeSim(kind, seed, driftS);
  const half = driftS / 2;
  const plant = sim.config.plant;
  if (plant.type !== "first-order") throw new Error("the ARX oracle knows the harness's first-order plant only");
  const a1 = -Math.exp(-sim.Tc / plant.timeConstantS);
  const kf = noiseFilter(sim, true, wrong);
  const p = 4;
  // per signal (y, then the 4 columns): the A0⁻¹-filtered value and the innovations filter's state
  const aInv = new Float64Array(p + 1);
  const xs = Array.from({ length: p + 1 }, () => new Float64Array(kf.m));
  const info = new Float64Array(p * p);
  const rhs = new Float64Array(p);
  const yHist: number[] = [];
  const uHist: number[] = [];
  let tFirst = NaN;
  let samples = 0;
  let yy = 0;
  for (const { t, g, y, du } of deviations(sim, half)) {
    const S = kf.step(g);
    yHist.unshift(y);
    uHist.unshift(du);
    if (uHist.length <= STRUCTURE.nk) continue;
    yHist.length = 2;
    uHist.length = STRUCTURE.nk + 1;
    const phi = [-yHist[1]!, uHist[STRUCTURE.nk]!];
    const raw = [y, ...phi, ...phi.map((v) => (t - half) * v)];
    const e = raw.map((s, i) => {
      if (!whiten) return s;
      aInv[i] = s - a1 * aInv[i]!;
      return kf.innovate(xs[i]!, aInv[i]!, 0) / Math.sqrt(S);
    });
    yy += e[0]! ** 2;
    for (let i = 0; i < p; i++) {
      rhs[i] = rhs[i]! + e[i + 1]! * e[0]!;
      for (let j = 0; j < p; j++) info[i * p + j] = info[i * p + j]! + e[i + 1]! * e[j + 1]!;
    }
    if (!samples++) tFirst = t;
  }
  const cov = invert(info, p);
  if (!cov) return { est: null, error: Infinity };
  const theta = new Float64Array(p);
  for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) theta[i] = theta[i]! + cov[i * p + j]! * rhs[j]!;
  if (!whiten) {
    // ordinary least squares: the covariance at the residual variance (white-error formula)
    let rss = yy;
    for (let i = 0; i < p; i++) rss -= theta[i]! * rhs[i]!;
    for (let i = 0; i < p * p; i++) cov[i] = (cov[i]! * rss) / (samples - p);
  }
  const est: DriftEstimate = { t: half, tFirst, samples, theta: theta.slice(0, 2), rate: theta.slice(2), covariance: cov };
  const f = driftCrossing(est, STRUCTURE, sim.controller);
  const truth = trueCrossing(sim, driftS)!;
  return { est, error: f ? (f.at - truth) / (truth - half) : Infinity };
}

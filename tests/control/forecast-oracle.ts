/**
 * Oracle for the rim forecast (issue #10, item 3): how well could ANY estimator forecast the rim
 * crossing from the samples of the harness's runs (tests/control/forecast-tracker-mc.ts, the same
 * seeds, loop, excitation and noise)? The oracle knows what no live loop knows: the simulator's
 * own plant (state matrices A, B, C at T = 5 s, dead time included), its operating point, its
 * noise model (white PV noise of sd 0.2 %; the input load as the sum of a step process, a new
 * N(0, 2²) level with probability T / 600 s per sample, and an AR(1) walk of pole 0.999; the step
 * process taken by its second-order equivalent, an AR(1) of pole 1 − T / 600 s and variance 4, so
 * the estimate is the best LINEAR one, exactly ML if the load were Gaussian), and the shape of the
 * drift: the process gain g(t) = g0 + beta h(t) with h(t) = g_true(t) − g_true(0) (linear in time
 * for the gain creep; the ramp's accelerating schedule). Only g0 and beta are estimated (truth:
 * g_true(0), 1), from every sample from 0 to half way, by generalised least squares through the
 * Kalman filter of the noise model: the innovations are linear in (g0, beta), so the estimate is
 * ordinary least squares of the filter's innovations of y on those of the two input responses,
 * each scaled by the innovation sd (the prediction-error decomposition of the Gaussian likelihood;
 * Ljung, *System Identification*, 2nd ed., 1999, secs. 7.3 and 9.2; Söderström & Stoica, *System
 * Identification*, 1989, ch. 7; from memory). Consistent in closed loop (the direct method: the
 * regressors are functions of past data only, the innovations a martingale difference). Its
 * information matrix sum psi psi' / S is the Fisher information of the samples given the inputs,
 * so its inverse is the Cramér–Rao bound of (g0, beta) for a Gaussian load. The forecast solves
 * g0 + beta h(t) = the critical gain factor for t (h extended linearly past the drift's end);
 * the bound's remaining-time sd is the delta method on that, and its share within ±15 % is
 * 2 Phi(0.15 / sd) − 1 for an unbiased Gaussian error.
 */
import type { LoopSim } from "@/simulators/loop-sim";
import { DRIFT_S, makeSim, trueCrossing, type ForecastScenario } from "./forecast-tracker-mc";

/** Sample period, s (the harness's). */
const T = 5;

export interface OracleRun {
  /** Estimated (g0, beta) and their Cramér–Rao covariance [v00, v01, v11]. */
  g0: number;
  beta: number;
  cov: [number, number, number];
  /** g_true(0) (beta's truth is 1). */
  g0True: number;
  /** Relative error of the oracle's remaining time at half way (Infinity: no crossing forecast). */
  error: number;
  /** Cramér–Rao sd of the relative remaining-time error (delta method). */
  boundSd: number;
}

/** Standard normal distribution function (erf by Abramowitz & Stegun 7.1.26, |error| < 1.5e-7). */
export function normalCdf(x: number): number {
  const z = Math.abs(x) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * z);
  const poly = t * (0.254829592 + t * (-0.284496736 + t * (1.421413741 + t * (-1.453152027 + t * 1.061405429))));
  const erf = 1 - poly * Math.exp(-z * z);
  return x >= 0 ? 0.5 * (1 + erf) : 0.5 * (1 - erf);
}

/** The drift shape h(t) = g(t) − g(0), extended past the drift's end along its last slope. */
function shape(sim: LoopSim, driftS: number): (t: number) => number {
  const g0 = sim.gainFactor(0);
  const dt = driftS / 1000;
  const slopeEnd = (sim.gainFactor(driftS) - sim.gainFactor(driftS - dt)) / dt;
  return (t) => (t <= driftS ? sim.gainFactor(t) : sim.gainFactor(driftS) + slopeEnd * (t - driftS)) - g0;
}

/** Time after `from` at which g0 + beta h(t) reaches gRim (bisection; h increasing); Infinity if not before 20 drifts. */
function crossingOf(h: (t: number) => number, g0: number, beta: number, gRim: number, from: number, driftS: number): number {
  const f = (t: number) => g0 + beta * h(t) - gRim;
  let lo = from;
  let hi = 20 * driftS;
  if (f(lo) >= 0) return lo;
  if (!(f(hi) >= 0)) return Infinity;
  for (let i = 0; i < 60; i++) {
    const mid = 0.5 * (lo + hi);
    if (f(mid) < 0) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * The Kalman filter of the noise model, with state [x (n plant states), load step, load walk];
 * x(k+1) = A x + B g_k (u_k − u0 + step_k + walk_k), y_k = C x_k + e_k. `g` is the true gain
 * at each sample (the oracle's noise model). Without `loadModel` the load is left out of the noise
 * model (white PV noise only: output-error least squares, where the load is unexplained).
 * `wrong` scales the load steps' variance and mean spacing away from the truth (a noise model
 * that is only roughly right, as one estimated from data would be).
 */
export function noiseFilter(sim: LoopSim, loadModel: boolean, wrong = { variance: 1, spacing: 1 }) {
  const { A, B, C, n } = sim.plant;
  const a = sim.config.activity;
  const m = n + 2;
  const pStep = T / (a.loadStepEveryS * wrong.spacing);
  const phi = [1 - pStep, 0.999];
  const q = loadModel ? [wrong.variance * a.loadStepSdPct ** 2 * (1 - (1 - pStep) ** 2), a.loadWalkSdPct ** 2 * T] : [0, 0];
  const r = a.noiseSdPct ** 2;
  const P = new Float64Array(m * m);
  const F = new Float64Array(m * m);
  const FP = new Float64Array(m * m);
  const K = new Float64Array(m);
  const next = new Float64Array(m);
  return {
    m,
    /**
     * The innovation of one signal's sample at the current step, s − C x, with x the filter's
     * predicted state for that signal; x moves to F x + K e + B input (call after `step`).
     */
    innovate(x: Float64Array, s: number, input: number): number {
      let yHat = 0;
      for (let j = 0; j < n; j++) yHat += C[j]! * x[j]!;
      const e = s - yHat;
      for (let i = 0; i < m; i++) {
        let v = K[i]! * e + (i < n ? B[i]! * input : 0);
        for (let j = 0; j < m; j++) v += F[i * m + j]! * x[j]!;
        next[i] = v;
      }
      x.set(next);
      return e;
    },
    /** One sample at gain g: returns the innovation variance S and sets the predictor gain K (for the next state). */
    step(g: number): number {
      // F at this sample
      F.fill(0);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) F[i * m + j] = A[i * n + j]!;
        F[i * m + n] = F[i * m + n + 1] = B[i]! * g;
      }
      F[n * m + n] = phi[0]!;
      F[(n + 1) * m + n + 1] = phi[1]!;
      // S = C P C' + r, PC = P C'
      const PC = new Float64Array(m);
      for (let i = 0; i < m; i++) for (let j = 0; j < n; j++) PC[i] = PC[i]! + P[i * m + j]! * C[j]!;
      let S = r;
      for (let j = 0; j < n; j++) S += C[j]! * PC[j]!;
      // predictor gain K = F P C' / S; P <- F P F' + Q − K S K'
      for (let i = 0; i < m; i++) {
        let s = 0;
        for (let j = 0; j < m; j++) s += F[i * m + j]! * PC[j]!;
        K[i] = s / S;
      }
      for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) {
        let s = 0;
        for (let l = 0; l < m; l++) s += F[i * m + l]! * P[l * m + j]!;
        FP[i * m + j] = s;
      }
      for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) {
        let s = 0;
        for (let l = 0; l < m; l++) s += FP[i * m + l]! * F[j * m + l]!;
        P[i * m + j] = s - K[i]! * S * K[j]!;
      }
      P[n * m + n] = P[n * m + n]! + q[0]!;
      P[(n + 1) * m + n + 1] = P[(n + 1) * m + n + 1]! + q[1]!;
      return S;
    },
  };
}

/**
 * The run's samples up to `untilS`: time t (s), the true gain g of that step, and PV and MV as
 * deviations from the operating point, % of span (what the oracle knows).
 */
export function* deviations(sim: LoopSim, untilS: number): Generator<{ t: number; g: number; y: number; du: number }> {
  const c = sim.config;
  while (sim.simTimeS <= untilS) {
    const t = sim.simTimeS;
    const g = sim.gainFactor(t);
    const s = sim.step();
    if (!s) continue;
    const y = (100 * (s.pv - c.pvRange[0])) / (c.pvRange[1] - c.pvRange[0]) - c.spPct;
    const du = (100 * (s.mv - c.mvRange[0])) / (c.mvRange[1] - c.mvRange[0]) - c.mvPct;
    yield { t, g, y, du };
  }
}

/** One seeded run of the harness's scenario, fitted by the oracle at half way. */
export function oracleRun(kind: Exclude<ForecastScenario, "no-drift">, seed: number, driftS = DRIFT_S, loadModel = true): OracleRun {
  const sim = makeSim(kind, seed, driftS);
  const half = driftS / 2;
  const h = shape(sim, driftS);
  const kf = noiseFilter(sim, loadModel);
  const m = kf.m;
  // predicted states of the three filters: y with no input (x0), and the responses to the inputs
  // of g0 (column 1) and beta (column 2), each through the same innovations filter
  const xs = [new Float64Array(m), new Float64Array(m), new Float64Array(m)];
  const info: [number, number, number] = [0, 0, 0];
  const rhs: [number, number] = [0, 0];
  for (const { t, g, y, du } of deviations(sim, half)) {
    const S = kf.step(g);
    const eps = [kf.innovate(xs[0]!, y, 0), kf.innovate(xs[1]!, 0, du), kf.innovate(xs[2]!, 0, h(t) * du)];
    // innovation of y at theta: eps0 − theta' psi with psi = −eps_{1,2} (the columns' responses)
    const p1 = -eps[1]!, p2 = -eps[2]!;
    info[0] += (p1 * p1) / S;
    info[1] += (p1 * p2) / S;
    info[2] += (p2 * p2) / S;
    rhs[0] += (p1 * eps[0]!) / S;
    rhs[1] += (p2 * eps[0]!) / S;
  }
  const det = info[0]! * info[2]! - info[1]! ** 2;
  const cov: [number, number, number] = [info[2]! / det, -info[1]! / det, info[0]! / det];
  const g0 = cov[0] * rhs[0]! + cov[1] * rhs[1]!;
  const beta = cov[1] * rhs[0]! + cov[2] * rhs[1]!;
  const g0True = sim.gainFactor(0);
  const gRim = sim.criticalGainFactor();
  const truth = trueCrossing(sim, driftS)!;
  const remaining = truth - half;
  const at = crossingOf(h, g0, beta, gRim, half, driftS);
  // delta method at the truth: d t / d (g0, beta) by central differences
  const dg = 1e-4;
  const tOf = (a: number, b: number) => crossingOf(h, a, b, gRim, 0, driftS);
  const J0 = (tOf(g0True + dg, 1) - tOf(g0True - dg, 1)) / (2 * dg);
  const J1 = (tOf(g0True, 1 + dg) - tOf(g0True, 1 - dg)) / (2 * dg);
  const varT = J0 * J0 * cov[0] + 2 * J0 * J1 * cov[1] + J1 * J1 * cov[2];
  return { g0, beta, cov, g0True, error: (at - truth) / remaining, boundSd: Math.sqrt(varT) / remaining };
}

export interface OracleMc {
  runs: number;
  /** Share of runs whose oracle forecast lies within ±15 % of the true remaining time. */
  within15: number;
  /** Mean over runs of the bound's Gaussian share within ±15 %, 2 Phi(0.15 / sd) − 1. */
  boundWithin15: number;
  /** Median and sd of the oracle's relative error; root-mean-square of the bound's sd. */
  medianError: number;
  errorSd: number;
  boundSd: number;
  /** Mean beta and its sd across runs; root-mean-square of beta's Cramér–Rao sd. */
  betaMean: number;
  betaSd: number;
  betaBoundSd: number;
}

export const mean = (v: number[]) => v.reduce((a, x) => a + x, 0) / v.length;
export const sd = (v: number[]) => Math.sqrt(v.reduce((a, x) => a + (x - mean(v)) ** 2, 0) / (v.length - 1));

/** `runs` seeded runs from `seed` (the harness's seeds), read at half way. */
export function oracleMc(kind: Exclude<ForecastScenario, "no-drift">, runs: number, seed: number, driftS = DRIFT_S, loadModel = true): OracleMc {
  const list = Array.from({ length: runs }, (_, r) => oracleRun(kind, seed + r, driftS, loadModel));
  const errors = list.map((o) => o.error).filter(Number.isFinite).sort((a, b) => a - b);
  return {
    runs,
    within15: list.filter((o) => Math.abs(o.error) <= 0.15).length / runs,
    boundWithin15: mean(list.map((o) => 2 * normalCdf(0.15 / o.boundSd) - 1)),
    medianError: errors[Math.floor(errors.length / 2)] ?? NaN,
    errorSd: sd(errors),
    boundSd: Math.sqrt(mean(list.map((o) => o.boundSd ** 2))),
    betaMean: mean(list.map((o) => o.beta)),
    betaSd: sd(list.map((o) => o.beta)),
    betaBoundSd: Math.sqrt(mean(list.map((o) => o.cov[2]))),
  };
}

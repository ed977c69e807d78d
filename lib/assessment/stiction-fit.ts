/**
 * Stiction model fit (Hammerstein): Jelali, "Estimation of valve stiction in control loops using
 * separable least-squares and global search algorithms", J. Process Control 18 (2008) (from
 * memory). The controller output MV passes through the two-parameter sticking valve of
 * Choudhury, Thornhill & Shah (2005; stiction-model.ts) and the valve position drives a linear
 * ARX model of the process; S and J are searched on a grid, the linear part is fitted by least
 * squares for each, and the best fit is compared with the linear fit (S = 0, valve = MV).
 *
 * Why it is independent of the shape tests: it asks whether a valve that holds still until the
 * output has moved by S explains PV better than a valve that follows the output. In closed loop at
 * a constant set point, MV is a linear function of past PV, so a linear model MV -> PV gains
 * nothing from the feedback data; a sticking valve's piecewise-constant position is not such a
 * function, and only a real stick-slip makes the fit markedly better. Reported: the residual
 * ratio (best / linear; 1 = no gain) and the S, J of the best fit, in % of the output range.
 *
 * Guards: the data are block-averaged to about 24 samples per cycle (12 found more sticking
 * valves on DEV but none at all on the test loops of tests/assessment, and fewer than 24 on
 * FROZEN's: not kept); the process part has two autoregressive terms (enough for an integrator or a
 * lag) and input lags up to half a cycle (dead time unknown); an offset term takes the load's
 * mean. Loads and noise remain in the
 * residual, so the ratio is judged with a margin (diagnosis.ts, stiction.ts).
 */
import { StictionValve } from "./stiction-model";

export interface StictionFitResult {
  /** Residual variance of the best sticking-valve model over that of the linear one (<= 1). */
  residualRatio: number;
  /** S and J of the best fit, % of the output range. */
  bandPct: number;
  jumpPct: number;
  /** Samples (after block averaging) fitted. */
  samples: number;
}

const NA = 2;
/** Most decimated samples fitted (the last ones); keeps a day's fit within a few tens of ms. */
const MAX_FIT = 6000;

/** Least squares of y on the columns of a regressor built row by row; returns the residual variance. */
function arxResidual(pv: Float64Array, v: Float64Array, nb: number): number {
  const n = pv.length;
  const p = 1 + NA + nb;
  const start = Math.max(NA, nb);
  const A = new Float64Array(p * p);
  const b = new Float64Array(p);
  const row = new Float64Array(p);
  let yy = 0;
  for (let t = start; t < n; t++) {
    row[0] = 1;
    for (let i = 1; i <= NA; i++) row[i] = pv[t - i]!;
    for (let j = 1; j <= nb; j++) row[NA + j] = v[t - j]!;
    const y = pv[t]!;
    yy += y * y;
    for (let r = 0; r < p; r++) {
      const xr = row[r]!;
      b[r] = b[r]! + xr * y;
      for (let c = 0; c <= r; c++) A[r * p + c] = A[r * p + c]! + xr * row[c]!;
    }
  }
  const m = n - start;
  if (m <= 2 * p) return NaN;
  // Cholesky with a tiny ridge (regressors can be nearly collinear under feedback).
  let trace = 0;
  for (let r = 0; r < p; r++) trace += A[r * p + r]!;
  const ridge = 1e-9 * (trace / p) + 1e-300;
  const L = new Float64Array(p * p);
  for (let r = 0; r < p; r++) {
    for (let c = 0; c <= r; c++) {
      let s = A[r * p + c]! + (r === c ? ridge : 0);
      for (let k = 0; k < c; k++) s -= L[r * p + k]! * L[c * p + k]!;
      if (r === c) {
        if (!(s > 0)) return NaN;
        L[r * p + r] = Math.sqrt(s);
      } else L[r * p + c] = s / L[c * p + c]!;
    }
  }
  // theta = A^-1 b; residual = yy - b'theta.
  const z = new Float64Array(p);
  for (let r = 0; r < p; r++) {
    let s = b[r]!;
    for (let k = 0; k < r; k++) s -= L[r * p + k]! * z[k]!;
    z[r] = s / L[r * p + r]!;
  }
  let explained = 0;
  for (let r = 0; r < p; r++) explained += z[r]! * z[r]!;
  return Math.max(0, yy - explained) / m;
}

function blockMeans(x: ArrayLike<number>, from: number, d: number, count: number): Float64Array {
  const out = new Float64Array(count);
  for (let k = 0; k < count; k++) {
    let s = 0;
    const o = from + k * d;
    for (let i = 0; i < d; i++) s += x[o + i]!;
    out[k] = s / d;
  }
  return out;
}

/**
 * Fit of the sticking-valve model to MV (% of output range) and PV (% of span) of one
 * closed-loop stretch with a cycle of `periodSamples`. Null when the stretch is too short.
 */
export function fitStictionModel(mv: Float64Array, pv: Float64Array, periodSamples: number): StictionFitResult | null {
  const n = Math.min(mv.length, pv.length);
  if (periodSamples < 8 || n < 6 * periodSamples) return null;
  const d = Math.max(1, Math.floor(periodSamples / 24));
  let count = Math.floor(n / d);
  if (count < 200) return null;
  count = Math.min(count, MAX_FIT);
  // The valve state runs over the whole stretch; the fit uses its last `count` blocks.
  const from = n - count * d;
  const nb = Math.max(2, Math.min(16, Math.ceil(periodSamples / d / 2)));
  const pvd = blockMeans(pv, from, d, count);
  let mean = 0;
  for (let i = from; i < n; i++) mean += mv[i]!;
  mean /= n - from;
  let sd = 0;
  for (let i = from; i < n; i++) sd += (mv[i]! - mean) ** 2;
  sd = Math.sqrt(sd / (n - from));
  if (!(sd > 0)) return null;
  const linear = arxResidual(pvd, blockMeans(mv, from, d, count), nb);
  if (!(linear > 0)) return null;
  const pos = new Float64Array(n);
  let best = { r: linear, S: 0, J: 0 };
  // S up to about twice the output's peak-to-peak swing of a sine of the same variance.
  for (const fS of [0.1, 0.2, 0.3, 0.45, 0.6, 0.8, 1, 1.3, 1.7, 2.2, 3]) {
    const S = fS * sd;
    for (const fJ of [0, 0.5, 1]) {
      const J = fJ * S;
      const valve = new StictionValve({ S, J }, mv[0]!, [-Infinity, Infinity]);
      for (let i = 0; i < n; i++) pos[i] = valve.update(mv[i]!);
      const r = arxResidual(pvd, blockMeans(pos, from, d, count), nb);
      if (r < best.r) best = { r, S, J };
    }
  }
  return { residualRatio: best.r / linear, bandPct: best.S, jumpPct: best.J, samples: count };
}

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

/** Σ x[t - i] · y[t - j] over t in [from, to), in ascending t (the order the normal equations are summed in). */
function lagDot(x: Float64Array, i: number, y: Float64Array, j: number, from: number, to: number): number {
  let s = 0;
  for (let t = from; t < to; t++) s += x[t - i]! * y[t - j]!;
  return s;
}

/**
 * lagDot for four consecutive lags j, j+1, j+2, j+3 of y at once, into out[o..o+3]: four
 * independent sums, each still in ascending t, so each is bit for bit lagDot's (only the CPU's
 * adds overlap).
 */
function lagDot4(x: Float64Array, i: number, y: Float64Array, j: number, from: number, to: number, out: Float64Array, o: number): void {
  let s0 = 0;
  let s1 = 0;
  let s2 = 0;
  let s3 = 0;
  for (let t = from; t < to; t++) {
    const a = x[t - i]!;
    const k = t - j;
    s0 += a * y[k]!;
    s1 += a * y[k - 1]!;
    s2 += a * y[k - 2]!;
    s3 += a * y[k - 3]!;
  }
  out[o] = s0;
  out[o + 1] = s1;
  out[o + 2] = s2;
  out[o + 3] = s3;
}

/**
 * The part of the normal equations that does not depend on the valve: the constant and PV lags
 * (rows and columns 0..NA), their products with PV, and Σ PV². Shared by the linear fit and every
 * (S, J) of the grid; each sum runs over t in ascending order, so the result is bit for bit the
 * one of summing all products row by row.
 */
interface ArxFixed {
  pv: Float64Array;
  nb: number;
  p: number;
  start: number;
  /** Lower triangle of the (1+NA)² block, row-major in a p×p layout. */
  A: Float64Array;
  b: Float64Array;
  yy: number;
}

function prepareArx(pv: Float64Array, nb: number): ArxFixed {
  const n = pv.length;
  const p = 1 + NA + nb;
  const start = Math.max(NA, nb);
  const ones = new Float64Array(n).fill(1);
  // Column r of the regressor is col(r)[t - lag(r)]: the constant, then PV lagged by 1..NA.
  const A = new Float64Array(p * p);
  const b = new Float64Array(p);
  for (let r = 0; r <= NA; r++) {
    const xr = r === 0 ? ones : pv;
    b[r] = lagDot(xr, r, pv, 0, start, n);
    for (let c = 0; c <= r; c++) A[r * p + c] = lagDot(xr, r, c === 0 ? ones : pv, c, start, n);
  }
  return { pv, nb, p, start, A, b, yy: lagDot(pv, 0, pv, 0, start, n) };
}

/** Least squares of PV on the constant, PV lags 1..NA and valve lags 1..nb; returns the residual variance. */
function arxResidual(f: ArxFixed, v: Float64Array): number {
  const { pv, nb, p, start } = f;
  const n = pv.length;
  const A = new Float64Array(f.A);
  const b = new Float64Array(f.b);
  const yy = f.yy;
  for (let j = 1; j <= nb; j++) {
    const r = NA + j;
    // Σ v, Σ v·PV(t), Σ v·PV(t-1), Σ v·PV(t-2) (NA = 2): b and the constant's and PV lags' columns (a·1 is exactly a).
    let s1 = 0;
    let sb = 0;
    let sp1 = 0;
    let sp2 = 0;
    for (let t = start; t < n; t++) {
      const a = v[t - j]!;
      s1 += a;
      sb += a * pv[t]!;
      sp1 += a * pv[t - 1]!;
      sp2 += a * pv[t - 2]!;
    }
    b[r] = sb;
    A[r * p] = s1;
    A[r * p + 1] = sp1;
    A[r * p + 2] = sp2;
    let c = NA + 1;
    for (; c + 3 <= r; c += 4) lagDot4(v, j, v, c - NA, start, n, A, r * p + c);
    for (; c <= r; c++) A[r * p + c] = lagDot(v, j, v, c - NA, start, n);
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
  const fixed = prepareArx(pvd, nb);
  const linear = arxResidual(fixed, blockMeans(mv, from, d, count));
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
      const r = arxResidual(fixed, blockMeans(pos, from, d, count));
      if (r < best.r) best = { r, S, J };
    }
  }
  return { residualRatio: best.r / linear, bandPct: best.S, jumpPct: best.J, samples: count };
}

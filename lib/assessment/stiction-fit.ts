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
 * Guards (our choices, set on DEV of the benchmark): the data are block-averaged at two sizes,
 * about 24 and about 12 blocks per cycle, over the same stretch, and the larger gain counts: the
 * one-step-ahead residual of an ARX fit is dominated by the fast load and noise at fine sampling,
 * where a stick-slip changes few samples, while at coarse sampling the fast part of a slip is
 * averaged away; which size shows a slip depends on the process's speed against the cycle, which
 * routine data do not give. Both sizes on both models: no size is favoured. The process part has
 * two autoregressive terms (enough for an integrator or a lag), input lags up to half a cycle
 * (dead time unknown), an offset term for the load's mean, and a sine and cosine at the cycle's
 * period: a coherent outside oscillation then belongs to the linear model, and a sticking valve
 * must explain PV beyond it (an outside cycle otherwise lets the piecewise-constant valve fit by
 * chance). Loads and noise remain in the residual, so the ratio is judged with a margin
 * (stiction.ts).
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
/** Block sizes tried, in blocks per cycle (the finer first); the larger gain counts (ours: see the header). */
const BLOCKS_PER_CYCLE = [24, 12];
/** Most decimated samples fitted (the last ones); keeps a day's fit within a few tens of ms. */
const MAX_FIT = 6000;

/** Σ x[t - i] · y[t - j] over t in [from, to), in ascending t (the order the normal equations are summed in). */
function lagDot(x: Float64Array, i: number, y: Float64Array, j: number, from: number, to: number): number {
  let s = 0;
  for (let t = from; t < to; t++) s += x[t - i]! * y[t - j]!;
  return s;
}

/**
 * The part of the normal equations that does not depend on the valve: the fixed columns (the
 * constant, PV lagged by 1..NA, and a sine and cosine at the cycle's period), their products with
 * PV, and Σ PV². Shared by the linear fit and every (S, J) of the grid; each sum runs over t in
 * ascending order, so the result is bit for bit the one of summing all products row by row.
 */
interface ArxFixed {
  pv: Float64Array;
  nb: number;
  p: number;
  start: number;
  /** Fixed columns, each read at t - lag. */
  cols: Float64Array[];
  lags: number[];
  /** Lower triangle of the fixed block, row-major in a p×p layout. */
  A: Float64Array;
  b: Float64Array;
  yy: number;
}

/** Number of fixed columns: constant, NA PV lags, sine, cosine. */
const NF = 1 + NA + 2;

function prepareArx(pv: Float64Array, nb: number, cyclePeriod: number): ArxFixed {
  const n = pv.length;
  const p = NF + nb;
  const start = Math.max(NA, nb);
  const ones = new Float64Array(n).fill(1);
  const sin = new Float64Array(n);
  const cos = new Float64Array(n);
  const w = (2 * Math.PI) / cyclePeriod;
  for (let t = 0; t < n; t++) {
    sin[t] = Math.sin(w * t);
    cos[t] = Math.cos(w * t);
  }
  const cols = [ones, pv, pv, sin, cos];
  const lags = [0, 1, 2, 0, 0];
  const A = new Float64Array(p * p);
  const b = new Float64Array(p);
  for (let r = 0; r < NF; r++) {
    b[r] = lagDot(cols[r]!, lags[r]!, pv, 0, start, n);
    for (let c = 0; c <= r; c++) A[r * p + c] = lagDot(cols[r]!, lags[r]!, cols[c]!, lags[c]!, start, n);
  }
  return { pv, nb, p, start, cols, lags, A, b, yy: lagDot(pv, 0, pv, 0, start, n) };
}

/** Least squares of PV on the fixed columns and valve lags 1..nb; returns the residual variance. */
function arxResidual(f: ArxFixed, v: Float64Array): number {
  const { pv, nb, p, start } = f;
  const n = pv.length;
  const A = new Float64Array(f.A);
  const b = new Float64Array(f.b);
  const yy = f.yy;
  const { cols, lags } = f;
  const sin = cols[3]!;
  const cos = cols[4]!;
  for (let j = 1; j <= nb; j++) {
    const r = NF + j - 1;
    // Σ v·PV(t) (b) and the valve column's products with the fixed columns (a·1 is exactly a).
    let s1 = 0;
    let sb = 0;
    let sp1 = 0;
    let sp2 = 0;
    let ss = 0;
    let sc = 0;
    for (let t = start; t < n; t++) {
      const a = v[t - j]!;
      s1 += a;
      sb += a * pv[t]!;
      sp1 += a * pv[t - lags[1]!]!;
      sp2 += a * pv[t - lags[2]!]!;
      ss += a * sin[t]!;
      sc += a * cos[t]!;
    }
    b[r] = sb;
    A[r * p] = s1;
    A[r * p + 1] = sp1;
    A[r * p + 2] = sp2;
    A[r * p + 3] = ss;
    A[r * p + 4] = sc;
    // Valve lags j and k: Σ v(t-j)·v(t-k) over [start, n). Lag 1 directly; for k >= 2 from the
    // row above, shifting the window by one sample: S(j, k) = S(j-1, k-1) + v(start-j)·v(start-k)
    // - v(n-j)·v(n-k) (exact; start >= nb keeps every index in range).
    A[r * p + NF] = lagDot(v, j, v, 1, start, n);
    for (let k = 2; k <= j; k++) {
      A[r * p + NF + k - 1] = A[(r - 1) * p + NF + k - 2]! + v[start - j]! * v[start - k]! - v[n - j]! * v[n - k]!;
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
  interface Level {
    d: number;
    count: number;
    from: number;
    fixed: ArxFixed;
    linear: number;
    best: { r: number; S: number; J: number };
  }
  const levels: Level[] = [];
  for (const perCycle of BLOCKS_PER_CYCLE) {
    const d = Math.max(1, Math.floor(periodSamples / perCycle));
    if (levels.some((l) => l.d === d)) continue;
    let count = Math.floor(n / d);
    if (count < 200) continue;
    // Every level covers the same stretch as the finest (MAX_FIT blocks of it).
    count = Math.min(count, Math.round((MAX_FIT * perCycle) / BLOCKS_PER_CYCLE[0]!));
    // The valve state runs over the whole stretch; the fit uses its last `count` blocks.
    const from = n - count * d;
    const nb = Math.max(2, Math.min(16, Math.ceil(periodSamples / d / 2)));
    const fixed = prepareArx(blockMeans(pv, from, d, count), nb, periodSamples / d);
    const linear = arxResidual(fixed, blockMeans(mv, from, d, count));
    if (linear > 0) levels.push({ d, count, from, fixed, linear, best: { r: linear, S: 0, J: 0 } });
  }
  if (levels.length === 0) return null;
  const from = Math.min(...levels.map((l) => l.from));
  let mean = 0;
  for (let i = from; i < n; i++) mean += mv[i]!;
  mean /= n - from;
  let sd = 0;
  for (let i = from; i < n; i++) sd += (mv[i]! - mean) ** 2;
  sd = Math.sqrt(sd / (n - from));
  if (!(sd > 0)) return null;
  const pos = new Float64Array(n);
  // The valve's state forgets its start after a few reversals: run it from four cycles before the fit.
  const warm = Math.max(0, from - Math.ceil(4 * periodSamples));
  // S up to about twice the output's peak-to-peak swing of a sine of the same variance.
  for (const fS of [0.1, 0.2, 0.3, 0.45, 0.6, 0.8, 1, 1.3, 1.7, 2.2, 3]) {
    const S = fS * sd;
    for (const fJ of [0, 0.5, 1]) {
      const J = fJ * S;
      const valve = new StictionValve({ S, J }, mv[warm]!, [-Infinity, Infinity]);
      for (let i = warm; i < n; i++) pos[i] = valve.update(mv[i]!);
      for (const l of levels) {
        const r = arxResidual(l.fixed, blockMeans(pos, l.from, l.d, l.count));
        if (r < l.best.r) l.best = { r, S, J };
      }
    }
  }
  let pick = levels[0]!;
  for (const l of levels) if (l.best.r / l.linear < pick.best.r / pick.linear) pick = l;
  return { residualRatio: pick.best.r / pick.linear, bandPct: pick.best.S, jumpPct: pick.best.J, samples: pick.count };
}

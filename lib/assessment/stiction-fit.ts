/**
 * Stiction model fit (Hammerstein): Jelali, "Estimation of valve stiction in control loops using
 * separable least-squares and global search algorithms", J. Process Control 18 (2008) (from
 * memory). The controller output MV passes through the two-parameter sticking valve of
 * Choudhury, Thornhill & Shah (2005; stiction-model.ts) and the valve position drives a linear
 * ARX model of the process; S and J are searched on a grid and refined around its best (the fit
 * is sharp in S), the linear part is fitted by least squares for each, and the best fit is
 * compared with the linear fit (S = 0, valve = MV).
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
 * FROZEN's: not kept); the process part is fitted with two autoregressive terms (enough for an
 * integrator or a lag) and with as many as input lags (room for coloured loads), input lags up to
 * half a cycle (dead time unknown); an offset term takes the load's mean. Loads and noise remain
 * in the residual, so the gain is read against what chance gives (readStictionFit).
 */
import { cumSum, LagSums, lagTotal } from "./lag-sums";
import { noiseSigma } from "./signal";
import { StictionValve } from "./stiction-model";

export interface StictionFitResult {
  /** Residual variance of the best sticking-valve model over that of the linear one (<= 1). */
  residualRatio: number;
  /** S and J of the best fit, % of the output range. */
  bandPct: number;
  jumpPct: number;
  /** Samples (after block averaging) fitted. */
  samples: number;
  /**
   * Share of the linear fit's residual a sticking valve may remove by chance alone (ours): its nb
   * lags replace the nb lags of MV, so both models have as many parameters, and what nb regressors
   * remove from noise (a χ²(nb)/m share, whose standard deviation is √(2 nb)/m) differs between
   * the two by chance; three standard deviations, 3√(2 nb)/m, cover the grid's best candidate.
   * In the nested fit the valve's lags are added to MV's, so the mean nb/m is added.
   */
  chanceGain: number;
  /** True when the best band is the largest searched: no estimate, the valve then barely moves. */
  atEdge: boolean;
  /** Slips of the best-fitting valve per cycle of `periodSamples` over the fitted stretch. */
  slipsPerCycle: number;
  /**
   * Share of the linear fit's residual that is white measurement noise of PV (the fast noise's
   * variance over the block length; at most MAX_NOISE_SHARE): no model of the valve can explain
   * it, so the gain's floors apply to the rest (readStictionFit).
   */
  noiseShare: number;
}

/** Most of the residual counted as measurement noise (ours): the fast-noise estimate also holds fast process moves. */
const MAX_NOISE_SHARE = 0.5;

/** Most decimated samples fitted (the last ones); keeps a day's fit within a few tens of ms. */
const MAX_FIT = 6000;
/** What fitStictionModel needs (also what stiction-few-cycles.ts waits for): cycles of the stretch, blocks, blocks per cycle, samples per cycle. */
export const FIT_MIN_CYCLES = 6;
export const FIT_MIN_BLOCKS = 200;
export const FIT_BLOCKS_PER_CYCLE = 24;
export const FIT_MIN_PERIOD = 8;

/** Sums of one input series: with PV, with itself, and its running sum. */
interface InputSums {
  withPv: LagSums;
  self: LagSums;
  cum: Float64Array;
}

/**
 * Lag differences read (arxResidual): input lag i in 1..nb with PV lag j in 0..na (na <= nb), so
 * δ = j - i in [-nb, nb - 1]; an input lag with another, |δ| <= nb - 1.
 */
function inputSums(n: number, nb: number): InputSums {
  return { withPv: new LagSums(n, -nb, nb - 1, nb), self: new LagSums(n, 1 - nb, 0, nb), cum: new Float64Array(n + 1) };
}

function fillInput(s: InputSums, pv: Float64Array, u: Float64Array): void {
  s.withPv.fill(u, pv);
  s.self.fill(u, u);
  let t = 0;
  for (let i = 0; i < u.length; i++) s.cum[i + 1] = t += u[i]!;
}

/** Normal-equation sums of PV, MV and a valve's position. */
interface ArxSums {
  n: number;
  nb: number;
  /** First fitted sample (the largest lag); the same for every model, so their residuals compare. */
  start: number;
  /** PV × PV, lag differences δ in [-nb, 0]. */
  pp: LagSums;
  pvCum: Float64Array;
  mv: InputSums;
  valve: InputSums;
  /** Valve × MV (the nested model only). */
  valveMv: LagSums | null;
}

function arxSums(pv: Float64Array, mv: Float64Array, nb: number, nested: boolean): ArxSums {
  const n = pv.length;
  const f: ArxSums = {
    n,
    nb,
    start: nb,
    pp: new LagSums(n, -nb, 0, nb).fill(pv, pv),
    pvCum: cumSum(pv),
    mv: inputSums(n, nb),
    valve: inputSums(n, nb),
    valveMv: nested ? new LagSums(n, 1 - nb, nb - 1, nb) : null,
  };
  fillInput(f.mv, pv, mv);
  return f;
}

/** Regressors after the constant and PV lags: MV lags (the linear valve), the valve's lags, or both (nested). */
type ArxInputs = "mv" | "valve" | "nested";

/** Normal-equation entry of regressors (series a, lag i) and (series b, lag j), a >= b; series -1 the constant, 0 PV, 1 MV, 2 the valve. */
function normalEntry(f: ArxSums, m: number, a: number, i: number, b: number, j: number): number {
  if (b < 0) return a < 0 ? m : lagTotal(a === 0 ? f.pvCum : a === 1 ? f.mv.cum : f.valve.cum, f.start, i);
  if (a === 0) return i >= j ? f.pp.get(i, j) : f.pp.get(j, i);
  const s = a === 1 ? f.mv : f.valve;
  if (b === 0) return s.withPv.get(i, j);
  if (a === b) return i >= j ? s.self.get(i, j) : s.self.get(j, i);
  return f.valveMv!.get(i, j);
}

/** Scratch for arxResidual (at most 1 + 3·16 regressors; JS runs one call at a time). */
const MAX_P = 49;
const colSeries = new Int8Array(MAX_P);
const colLag = new Int8Array(MAX_P);
const normalA = new Float64Array(MAX_P * MAX_P);
const normalB = new Float64Array(MAX_P);
const cholL = new Float64Array(MAX_P * MAX_P);
const cholZ = new Float64Array(MAX_P);

/**
 * Least squares of PV on a constant, PV lags 1..na (na <= nb) and input lags 1..nb (all normal
 * equations from sums of lagged products); returns the residual variance, NaN when the equations
 * are singular.
 */
function arxResidual(f: ArxSums, na: number, inputs: ArxInputs): number {
  const { n, nb, start } = f;
  const m = n - start;
  // columns: the constant (series -1), PV lags (0), MV lags (1), valve lags (2)
  let p = 0;
  const col = (a: number, i: number) => {
    colSeries[p] = a;
    colLag[p++] = i;
  };
  col(-1, 0);
  for (let i = 1; i <= na; i++) col(0, i);
  if (inputs !== "valve") for (let j = 1; j <= nb; j++) col(1, j);
  if (inputs !== "mv") for (let j = 1; j <= nb; j++) col(2, j);
  if (m <= 2 * p) return NaN;
  const A = normalA;
  const b = normalB;
  for (let r = 0; r < p; r++) {
    const a = colSeries[r]!;
    const i = colLag[r]!;
    b[r] = a < 0 ? lagTotal(f.pvCum, start, 0) : a === 0 ? f.pp.get(i, 0) : (a === 1 ? f.mv : f.valve).withPv.get(i, 0);
    // rows below the diagonal come after their columns (a >= b)
    for (let c = 0; c <= r; c++) A[r * p + c] = normalEntry(f, m, a, i, colSeries[c]!, colLag[c]!);
  }
  const yy = f.pp.get(0, 0);
  // Cholesky with a tiny ridge (regressors can be nearly collinear under feedback).
  let trace = 0;
  for (let r = 0; r < p; r++) trace += A[r * p + r]!;
  const ridge = 1e-9 * (trace / p) + 1e-300;
  const L = cholL;
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
  // with A = L L', b' A^-1 b = |L^-1 b|²; residual = yy - b' theta
  let explained = 0;
  const z = cholZ;
  for (let r = 0; r < p; r++) {
    let s = b[r]!;
    for (let k = 0; k < r; k++) s -= L[r * p + k]! * z[k]!;
    z[r] = s / L[r * p + r]!;
    explained += z[r]! * z[r]!;
  }
  return Math.max(0, yy - explained) / m;
}

function blockMeans(x: ArrayLike<number>, from: number, d: number, count: number, out = new Float64Array(count)): Float64Array {
  for (let k = 0; k < count; k++) {
    let s = 0;
    const o = from + k * d;
    for (let i = 0; i < d; i++) s += x[o + i]!;
    out[k] = s / d;
  }
  return out;
}

/**
 * Bands S searched, in standard deviations of MV: up to the full swing of a triangular output
 * (2√3 sd) and one band beyond it, where a valve would barely move (a best fit there is no
 * stick-slip estimate).
 */
const BANDS = [0.1, 0.2, 0.3, 0.45, 0.6, 0.8, 1, 1.3, 1.7, 2.2, 2.8, 3.5, 4.5];

/**
 * Fit of the sticking-valve model to MV (% of output range) and PV (% of span) of one
 * closed-loop stretch with a cycle of `periodSamples`. Null when the stretch is too short.
 *
 * `nested`: the valve's lags are added to MV's instead of replacing them. Under integral action
 * MV is also the controller's running estimate of the load (it moves until the load is
 * cancelled), so under random loads MV's lags predict PV through the load as well, which a
 * valve that holds still loses: the replacing fit can then show no gain even with the true valve
 * (seen in simulation). The nested fit asks whether the valve adds to what MV says.
 *
 * `blocksPerCycle`: how finely a cycle is block-averaged (24 by default; the coarser fit of
 * integrating loops, stiction-integrating.ts, uses 12).
 */
export function fitStictionModel(mv: Float64Array, pv: Float64Array, periodSamples: number, nested = false, blocksPerCycle = FIT_BLOCKS_PER_CYCLE): StictionFitResult | null {
  const n = Math.min(mv.length, pv.length);
  if (periodSamples < FIT_MIN_PERIOD || n < FIT_MIN_CYCLES * periodSamples) return null;
  const d = Math.max(1, Math.floor(periodSamples / blocksPerCycle));
  let count = Math.floor(n / d);
  if (count < FIT_MIN_BLOCKS) return null;
  count = Math.min(count, MAX_FIT);
  // The fit uses the last `count` blocks; the valve runs from ten cycles before them (its state
  // forgets where it started once it has slipped both ways, so running the whole day adds nothing).
  const from = n - count * d;
  const warm = Math.max(0, from - Math.ceil(10 * periodSamples));
  const nb = Math.max(2, Math.min(16, Math.ceil(periodSamples / d / 2)));
  const pvd = blockMeans(pv, from, d, count);
  let mean = 0;
  for (let i = from; i < n; i++) mean += mv[i]!;
  mean /= n - from;
  let sd = 0;
  for (let i = from; i < n; i++) sd += (mv[i]! - mean) ** 2;
  sd = Math.sqrt(sd / (n - from));
  if (!(sd > 0)) return null;
  const mvd = blockMeans(mv, from, d, count);
  const sums = arxSums(pvd, mvd, nb, nested);
  // Two orders of the process part: two PV lags (a lag or an integrator) and as many PV lags as
  // input lags (room for coloured loads); each sticking valve is compared with the linear valve
  // of the same order, and the larger gain counts.
  const orders = nb > 2 ? [2, nb] : [2];
  const linear = orders.map((na) => arxResidual(sums, na, "mv"));
  if (!linear.every((r) => r > 0)) return null;
  const pos = new Float64Array(n);
  const valveBlocks = new Float64Array(count);
  let best = { ratio: 1, S: 0, J: 0, slips: 0, order: 0 };
  const evaluate = (S: number, J: number): void => {
    const valve = new StictionValve({ S, J }, mv[warm]!, [-Infinity, Infinity]);
    valve.run(mv, warm, n, pos);
    const v = blockMeans(pos, from, d, count, valveBlocks);
    fillInput(sums.valve, pvd, v);
    sums.valveMv?.fill(v, mvd);
    for (let k = 0; k < orders.length; k++) {
      const ratio = arxResidual(sums, orders[k]!, nested ? "nested" : "valve") / linear[k]!;
      if (ratio < best.ratio) best = { ratio, S, J, slips: valve.slips, order: k };
    }
  };
  for (const fS of BANDS) for (const fJ of [0, 0.5, 1]) evaluate(fS * sd, fS * sd * fJ);
  const m = count - nb;
  const chanceGain = ((nested ? nb : 0) + 3 * Math.sqrt(2 * nb)) / m;
  // Refined only where the grid already shows a gain beyond chance: most loops are linear, and
  // the refinement doubles the fit's cost.
  if (best.S > 0 && 1 - best.ratio >= chanceGain) refine(evaluate, () => best);
  const noise = noiseSigma(pv.subarray(from, n)) ** 2 / d;
  return {
    noiseShare: Math.min(MAX_NOISE_SHARE, noise / linear[best.order]!),
    residualRatio: best.ratio,
    bandPct: best.S,
    jumpPct: best.J,
    samples: count,
    chanceGain,
    // the largest band's neighbourhood (refined within -20 %), beyond the grid's last but one
    atEdge: best.S > ((BANDS[BANDS.length - 1]! + BANDS[BANDS.length - 2]!) / 2) * sd,
    slipsPerCycle: best.slips / ((n - warm) / periodSamples),
  };
}

/**
 * Local refinement of the grid's best valve (ours): the fit is sharp in S and J (a band 10 % off
 * slips at other times and loses most of the gain, seen on the benchmark's sticking valves), so
 * the coarse grid alone finds only part of what a stick-slip valve explains. S is scanned in 5 %
 * steps within -20 %..+24 % of the best, then J in fifths of S (16 more fits; a finer scan of 43
 * fits changed no DEV verdict and cost live CPU).
 */
const S_STEPS = Array.from({ length: 10 }, (_, i) => 0.8 * 1.05 ** i);
const J_STEPS = Array.from({ length: 6 }, (_, i) => i / 5);

function refine(evaluate: (S: number, J: number) => void, best: () => { S: number; J: number }): void {
  const { S: S0, J: J0 } = best();
  for (const f of S_STEPS) evaluate(S0 * f, Math.min(S0 * f, J0));
  const S = best().S;
  for (const f of J_STEPS) evaluate(S, S * f);
}

/** Gain (1 - residual ratio) at or above which a sticking valve clearly explains PV better (ours, set on DEV). */
const CLEAR_GAIN = 0.05;
/** Gain below which the sticking valve explains nothing beyond a linear valve (ours). */
const NO_GAIN = 0.01;
/**
 * Slips per cycle below which the best-fitting valve cannot be what makes the cycles (ours): a
 * stick-slip cycle slips twice a cycle; a valve that moves less than once in two cycles gains by
 * following a few load steps, not by stick-slip.
 */
const MIN_SLIPS_PER_CYCLE = 0.5;

export type StictionFitReading = "clear" | "slight" | "none" | "implausible";

/**
 * What a fit says: `none` when the gain is within chance (or below 1 %), `implausible` when the
 * best valve is no stick-slip valve (its band the largest searched, beyond the output's swing, or
 * it seldom slips: a wide band then acts as a slow filter of MV that follows slow loads), `clear`
 * at twice the chance gain and at least 5 %, `slight` between.
 */
export function readStictionFit(fit: StictionFitResult): StictionFitReading {
  const gain = 1 - fit.residualRatio;
  const explainable = 1 - fit.noiseShare;
  if (gain < Math.max(NO_GAIN, fit.chanceGain)) return "none";
  if (fit.atEdge || fit.slipsPerCycle < MIN_SLIPS_PER_CYCLE) return "implausible";
  return gain >= Math.max(CLEAR_GAIN * explainable, 2 * fit.chanceGain) ? "clear" : "slight";
}

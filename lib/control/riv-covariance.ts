/**
 * Parameter covariance of the instrumental-variable estimate (lib/control/riv.ts).
 *
 * The IV estimate theta = R^-1 f, R = sum w z phi', has the asymptotic covariance of a sandwich,
 * not the least-squares sigma^2 (sum phi phi')^-1: R^-1 S R^-T with S the covariance of the
 * score sum, sum w z(k) v(k) (Söderström & Stoica, *System Identification*, 1989, sec. 8.2, the
 * IV covariance theorem, from memory: with v = H(q) e, e white of variance sigma^2,
 * P = sigma^2 R^-1 E[z~ z~'] R^-T where z~(k) = sum_i h_i z(k+i)). Here S is that expectation
 * written with the autocovariance of the equation error, estimated from the residuals of the
 * estimate being reported, over as many lags as the noise is correlated (`ScoreSum`).
 *
 * The white-equation-error form sigma^2 R^-1 Szz R^-T overstates the spread when v = A(q) n
 * (measured open loop, white MV: 95 % intervals covered 100 % with it, sd 2x too large) and
 * serves only until the sums have `HAC_MIN_PER_PARAMETER` informative samples per parameter.
 * Both are scaled as for weighted least squares (see `ArxEstimator.parameterCovariance`).
 */
import { ControlArgumentError } from "./errors";
import { invert, nearestPsd } from "./linalg";

/** Effective informative samples per parameter before the noise-autocovariance form replaces the white-noise one. */
export const HAC_MIN_PER_PARAMETER = 10;

/**
 * Lags a first-order prefilter (1 - q^-1)/(1 - c q^-1) on the data adds to the autocovariance of
 * the equation error (beyond the na of A(q) n): its terms decay as c^t, below 1 % of the leading
 * one after ln(0.01) / ln(c) lags (44 for c = 0.9). Fewer leave out a long negative tail (the
 * filter's gain at zero frequency is 0: its autocovariance sums to zero).
 */
export function prefilterNoiseLags(c: number): number {
  return c > 0 && c < 1 ? Math.ceil(Math.log(0.01) / Math.log(c)) : 0;
}

/**
 * Memory of the noise autocovariance, in memories of the parameters (its sums decay by
 * lambda^(1/4)): S sums 2 L + 1 (93 behind the tracker's prefilter) of its terms, and their errors add up. At the parameters' own
 * memory (200 samples for lambda 0.995) the sum of gamma(t), whose true value is zero under the
 * differencing prefilter, erred by as much as gamma(0) / 10, S was often indefinite and intervals of
 * the closed-loop radius far too narrow in those runs (complex pair of tests/control/tracker-coverage.ts,
 * 2,000 samples, 150 seeded runs, 44 lags: 91.3 % covered; at two memories 90.7 %; at four 94.0 %;
 * unlimited 94.0 %). The noise of a loop changes more slowly than its dynamics are tracked.
 */
export const NOISE_MEMORY = 4;

/** A decay factor below this is folded into its sums (1 / factor stays far from overflow). */
const FOLD_BELOW = 1e-150;

/**
 * Its part of the estimator's checkpoint: `Zs`, `Cs` the lag sums as kept with their decay factors
 * `gZ`, `gC`; `Z`, `C` in states written before them (every sum scaled each sample, read and
 * converted); `zr`, `xr` the lag rings, newest first (all absent in older states).
 */
export interface ScoreSumState {
  Zs?: number[];
  Cs?: number[];
  gZ?: number;
  gC?: number;
  Z?: number[];
  C?: number[];
  zr?: number[];
  xr?: number[];
  weight: number;
  /** Decayed count of the C sums (absent in older states). */
  noiseWeight?: number;
  count: number;
}

/**
 * The covariance of the score sum sum w(k) z(k) v(k) for an equation error v that is stationary
 * and independent of the instruments (they come from the set point, or in manual from the MV,
 * through the noise-free auxiliary model): S = sum_t gamma(t) (Z_t + Z_t') over t = -L..L, Z_t =
 * sum w(k) w(k-t) z(k) z(k-t)' (the covariance theorem's E[z~ z~'] sigma^2 written with the noise
 * autocovariance gamma, Söderström & Stoica 1989 sec. 8.2, from memory). gamma(t) is the weighted
 * mean of e(k) e(k-t), e the residual of the estimate being reported: e(k) = x(k)' beta with
 * x = [y, phi] and beta = [1, -theta], so gamma(t) = beta' C_t beta / (sum mu^(n-k)) with C_t =
 * sum mu^(n-k) x(k) x(k-t)', mu = lambda^(1 / NOISE_MEMORY) (a longer memory, see there).
 * Why not the HAC sum of the scores z e (an earlier version, na lags): the prefiltered equation
 * error is strongly negatively autocorrelated, so that sum is a small difference of large
 * products; it was often not positive in the direction of the radius and its PSD projection then
 * gave intervals far too narrow (95 % intervals of the closed-loop radius of the complex pair of
 * tests/control/tracker-coverage.ts through the tracker, 500 samples: 115 of 125 covered, errors
 * up to 9.7 sd; with the noise autocovariance over 46 lags 121 of 125). Over all lags S is
 * positive semi-definite (both sequences are sample autocovariances); truncated, its negative
 * eigenvalues are set to zero (nearest PSD matrix in the Frobenius norm; Higham,
 * Linear Algebra Appl. 103, 1988).
 *
 * Cost: (L + 1) (d^2 + (d + 1)^2) multiply-adds per informative sample, nothing more: the sums are
 * kept as Z_t / (gZ lambda^t) and C_t / gC with one decay factor each (gZ = lambda^(2n), gC = mu^n,
 * folded back into the sums when they fall below `FOLD_BELOW`), so no accumulator is scaled per
 * sample, and the last L samples sit in windows that one sample's products run along contiguously
 * (moved once every L + 1 samples). S costs as much again per call (a tracker state). The same
 * figures as scaling every sum each sample, to rounding (tests/control/riv-covariance-fast.test.ts);
 * that took 4-5x as long per sample (d 4, 46 lags: 8.4-10.3 against 2.1 us, Node 20, shared VM).
 */
export class ScoreSum {
  /** Decayed count of the samples in the sums (weights lambda^(n-k)). */
  weight = 0;
  /** The same with the noise autocovariance's weights mu^(n-k). */
  private noiseWeight = 0;
  private count = 0;
  private readonly e: number;
  /** Lags 0..lags: slots of the windows. */
  private readonly w: number;
  private readonly lam: number;
  private readonly decay: number;
  private readonly mu: number;
  /** lambda^t, t = 0..lags: the weight w(k-t) / w(k) of lag t in Z_t (applied when S is formed). */
  private readonly lagWeight: Float64Array;
  /** Z_t / (gZ lambda^t) laid out [i][t][j] (d x (lags + 1) x d), so one sample adds d runs of (lags + 1) d. */
  private readonly Z: Float64Array;
  /** C_t / gC laid out [a][t][b] ((d + 1) x (lags + 1) x (d + 1)). */
  private readonly C: Float64Array;
  private gZ = 1;
  private gC = 1;
  /** Windows of z and x, 2 (lags + 1) slots: slot p + t holds lag t, newest first (moved up once every lags + 1 samples). */
  private readonly zw: Float64Array;
  private readonly xw: Float64Array;
  private p: number;
  /** Buffers of autocovariance() and psd(). */
  private readonly beta: Float64Array;
  private readonly g: Float64Array;
  private readonly S: Float64Array;

  constructor(private readonly d: number, private readonly lags: number, lam: number) {
    const e = (this.e = d + 1);
    const w = (this.w = lags + 1);
    this.lam = lam;
    this.decay = lam * lam;
    this.mu = lam ** (1 / NOISE_MEMORY);
    this.lagWeight = new Float64Array(w).map((_, t) => lam ** t);
    this.Z = new Float64Array(d * w * d);
    this.C = new Float64Array(e * w * e);
    this.zw = new Float64Array(2 * w * d);
    this.xw = new Float64Array(2 * w * e);
    this.p = w;
    this.beta = new Float64Array(e);
    this.g = new Float64Array(w);
    this.S = new Float64Array(d * d);
  }

  /**
   * Adds the sample with instruments z, regressor phi and output y. The estimate's error is
   * R^-1 sum w(k) z(k) v(k) with w(k) = lam^(n-k), so z(k) z(k-t)' enters with w(k) w(k-t) =
   * lam^(2(n-k)) lam^t: the Z sums decay by lam^2 per informative sample, the C sums by
   * lam^(1 / NOISE_MEMORY). Lags not reached yet meet zeros in the windows.
   */
  add(z: Float64Array, phi: Float64Array, y: number): void {
    const { d, e, w, Z, C, zw, xw } = this;
    if (this.p === 0) {
      zw.copyWithin((w + 1) * d, 0, (w - 1) * d);
      xw.copyWithin((w + 1) * e, 0, (w - 1) * e);
      this.p = w + 1;
    }
    const p = --this.p;
    zw.set(z, p * d);
    xw[p * e] = y;
    xw.set(phi, p * e + 1);
    if (this.gZ * this.decay < FOLD_BELOW) this.gZ = fold(Z, this.gZ * this.decay);
    else this.gZ *= this.decay;
    if (this.gC * this.mu < FOLD_BELOW) this.gC = fold(C, this.gC * this.mu);
    else this.gC *= this.mu;
    outerWindow(Z, zw, p * d, w * d, 1 / this.gZ, d);
    outerWindow(C, xw, p * e, w * e, 1 / this.gC, e);
    this.weight = this.lam * this.weight + 1;
    this.noiseWeight = this.mu * this.noiseWeight + 1;
    this.count++;
  }

  /** Empties the sums (the samples so far came from instruments that no longer apply). */
  reset(): void {
    this.Z.fill(0);
    this.C.fill(0);
    this.zw.fill(0);
    this.xw.fill(0);
    this.gZ = this.gC = 1;
    this.p = this.w;
    this.weight = 0;
    this.noiseWeight = 0;
    this.count = 0;
  }

  /** Whether the sums hold enough informative samples for the covariance. */
  ready(): boolean {
    return this.weight >= HAC_MIN_PER_PARAMETER * this.d;
  }

  /** The noise autocovariance gamma(t) of the residuals of theta, t = 0..lags (a view of a buffer the next call overwrites). */
  autocovariance(theta: ArrayLike<number>): Float64Array {
    const { d, e, w, C, beta, g } = this;
    beta[0] = 1;
    for (let a = 0; a < d; a++) beta[a + 1] = -theta[a]!;
    g.fill(0);
    // gamma(t) = sum over a, b of beta_a beta_b C_t[a][b]: one run over t per (a, b)
    for (let a = 0; a < e; a++) {
      for (let b = 0; b < e; b++) {
        const c = beta[a]! * beta[b]!;
        for (let t = 0, o = a * w * e + b; t < w; t++, o += e) g[t] = g[t]! + c * C[o]!;
      }
    }
    const scale = this.noiseWeight > 0 ? this.gC / this.noiseWeight : 0;
    for (let t = 0; t < w; t++) g[t] = scale * g[t]!;
    return g;
  }

  /** S at the estimate theta (class comment), projected to the nearest positive semi-definite matrix. */
  psd(theta: ArrayLike<number>): Float64Array {
    const { d, w, Z, S } = this;
    const g = this.autocovariance(theta);
    for (let t = 0; t < w; t++) g[t] = this.gZ * this.lagWeight[t]! * g[t]!;
    // A = sum over t > 0 of g(t) Z_t (one run over t per entry, into S), then S = g(0) Z_0 + A + A'
    for (let i = 0; i < d; i++) {
      for (let j = 0; j < d; j++) {
        let s = 0;
        for (let t = 1, o = (i * w + 1) * d + j; t < w; t++, o += d) s += g[t]! * Z[o]!;
        S[i * d + j] = s;
      }
    }
    for (let i = 0; i < d; i++) {
      for (let j = 0; j <= i; j++) {
        const s = S[i * d + j]! + S[j * d + i]!;
        S[i * d + j] = g[0]! * Z[i * w * d + j]! + s;
        S[j * d + i] = g[0]! * Z[j * w * d + i]! + s;
      }
    }
    return nearestPsd(S, d);
  }

  /** The checkpoint: the sums as kept (`Zs`, `Cs`, with their factors; a resumed sum goes on bit for bit), the rings newest first. */
  toJSON(): ScoreSumState {
    const { d, e, lags, p } = this;
    const zr = Array.from(this.zw.subarray(p * d, (p + lags) * d));
    const xr = Array.from(this.xw.subarray(p * e, (p + lags) * e));
    return { Zs: Array.from(this.Z), Cs: Array.from(this.C), gZ: this.gZ, gC: this.gC, zr, xr, weight: this.weight, noiseWeight: this.noiseWeight, count: this.count };
  }

  /**
   * Restores a checkpointed sum. One written before the decay factors (`Z`, `C`: every sum scaled
   * each sample, Z_t and C_t in turn) is converted; one from before the noise autocovariance sums
   * (neither) starts empty.
   */
  load(s: ScoreSumState, arr: (name: string, v: unknown, len: number) => number[], num: (name: string, v: unknown) => number): void {
    this.reset();
    if ((s.Zs === undefined && s.Z === undefined) || s.noiseWeight === undefined) return;
    const { d, e, w, lags } = this;
    if (s.Zs !== undefined) {
      this.Z.set(arr("hac.Zs", s.Zs, this.Z.length));
      this.C.set(arr("hac.Cs", s.Cs, this.C.length));
      this.gZ = num("hac.gZ", s.gZ);
      this.gC = num("hac.gC", s.gC);
      if (!(this.gZ > 0 && this.gC > 0)) throw new ControlArgumentError("IV estimator state: hac.gZ and hac.gC must be > 0");
    } else {
      const Z = arr("hac.Z", s.Z, this.Z.length);
      const C = arr("hac.C", s.C, this.C.length);
      for (let t = 0; t < w; t++) {
        const lw = this.lagWeight[t]!;
        for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) this.Z[(i * w + t) * d + j] = lw > 0 ? Z[(t * d + i) * d + j]! / lw : 0;
        for (let a = 0; a < e; a++) for (let b = 0; b < e; b++) this.C[(a * w + t) * e + b] = C[(t * e + a) * e + b]!;
      }
    }
    this.zw.set(arr("hac.zr", s.zr, lags * d), w * d);
    this.xw.set(arr("hac.xr", s.xr, lags * e), w * e);
    this.weight = num("hac.weight", s.weight);
    this.noiseWeight = num("hac.noiseWeight", s.noiseWeight);
    this.count = num("hac.count", s.count);
  }
}

/**
 * sums[i][..] += scale v_i window[..] for the newest vector v (the window's first n entries) and the
 * window of `len` entries from `from`: one contiguous run per i, four terms a step (measured 1.6x
 * faster than one in Node 20 on this loop).
 */
function outerWindow(sums: Float64Array, win: Float64Array, from: number, len: number, scale: number, n: number): void {
  for (let i = 0, o = 0; i < n; i++, o += len) {
    const vi = scale * win[from + i]!;
    let k = 0;
    for (; k + 3 < len; k += 4) {
      const a = o + k;
      const b = from + k;
      sums[a] = sums[a]! + vi * win[b]!;
      sums[a + 1] = sums[a + 1]! + vi * win[b + 1]!;
      sums[a + 2] = sums[a + 2]! + vi * win[b + 2]!;
      sums[a + 3] = sums[a + 3]! + vi * win[b + 3]!;
    }
    for (; k < len; k++) sums[o + k] = sums[o + k]! + vi * win[from + k]!;
  }
}

/** Multiplies the scaled sums by their decay factor g (giving the plain sums) and returns the new factor, 1. */
function fold(sums: Float64Array, g: number): number {
  for (let k = 0; k < sums.length; k++) sums[k] = g * sums[k]!;
  return 1;
}

/**
 * The covariance of [a, b] (nested d x d): R^-1 S R^-T with the HAC sum at `theta` once `scores`
 * is ready and the result is positive on the diagonal (its squared weights are exact), else
 * s2 R^-1 Szz R^-T times `factor` (the weighted least-squares factor of the caller, which takes
 * the squared weights of Szz as proportional to its weights). NaN entries when R is singular.
 */
export function ivCovariance(R: Float64Array, Szz: Float64Array, scores: Pick<ScoreSum, "ready" | "psd">, theta: ArrayLike<number>, s2: number, factor: number, d: number): number[][] {
  const Rinv = invert(R, d);
  if (!Rinv) return Array.from({ length: d }, () => new Array<number>(d).fill(NaN));
  const sandwich = (middle: Float64Array, scale: number): number[][] => {
    const tmp = new Float64Array(d * d);
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) {
      let s = 0;
      for (let k = 0; k < d; k++) s += Rinv[i * d + k]! * middle[k * d + j]!;
      tmp[i * d + j] = s;
    }
    const out: number[][] = [];
    for (let i = 0; i < d; i++) {
      const row: number[] = [];
      for (let j = 0; j < d; j++) {
        let s = 0;
        for (let k = 0; k < d; k++) s += tmp[i * d + k]! * Rinv[j * d + k]!;
        row.push(scale * s);
      }
      out.push(row);
    }
    return out;
  };
  if (scores.ready()) {
    const cov = sandwich(scores.psd(theta), 1);
    if (cov.every((row, i) => row[i]! > 0)) return cov;
  }
  return sandwich(Szz, s2 * factor);
}

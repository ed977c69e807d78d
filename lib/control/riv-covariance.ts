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

/** Its part of the estimator's checkpoint (`Z`, `C`: the lag sums, `zr`, `xr`: the lag rings; absent in older states). */
export interface ScoreSumState {
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
 * Linear Algebra Appl. 103, 1988). Cost: (L + 1) (d^2 + (d + 1)^2) per informative sample.
 */
export class ScoreSum {
  /** Decayed count of the samples in the sums (weights lambda^(n-k)). */
  weight = 0;
  /** The same with the noise autocovariance's weights mu^(n-k). */
  private noiseWeight = 0;
  private count = 0;
  private readonly e: number;
  /** Z_t, t = 0..lags, d x d each (weights w(k) w(k-t)). */
  private readonly Z: Float64Array;
  /** C_t, t = 0..lags, (d + 1) x (d + 1) each (weights mu^(n-k)). */
  private readonly C: Float64Array;
  /** Rings of the last `lags` z and x, newest first. */
  private readonly zr: Float64Array;
  private readonly xr: Float64Array;
  private readonly x: Float64Array;

  constructor(private readonly d: number, private readonly lags: number) {
    const e = (this.e = d + 1);
    this.Z = new Float64Array((lags + 1) * d * d);
    this.C = new Float64Array((lags + 1) * e * e);
    this.zr = new Float64Array(lags * d);
    this.xr = new Float64Array(lags * e);
    this.x = new Float64Array(e);
  }

  /**
   * Adds the sample with instruments z, regressor phi and output y. The estimate's error is
   * R^-1 sum w(k) z(k) v(k) with w(k) = lam^(n-k), so z(k) z(k-t)' enters with w(k) w(k-t) =
   * lam^(2(n-k)) lam^t: the Z sums decay by lam^2 per informative sample, the C sums by
   * lam^(1 / NOISE_MEMORY).
   */
  add(z: Float64Array, phi: Float64Array, y: number, lam: number): void {
    const { d, e, lags, Z, C, zr, xr, x } = this;
    x[0] = y;
    for (let a = 0; a < d; a++) x[a + 1] = phi[a]!;
    const n = Math.min(lags, this.count);
    const dd = d * d;
    const ee = e * e;
    const decay = lam * lam;
    const mu = lam ** (1 / NOISE_MEMORY);
    let lagWeight = 1;
    for (let t = 0; t <= lags; t++, lagWeight *= lam) {
      const zo = t * dd;
      const co = t * ee;
      if (t > n) {
        // a lag not reached yet: its sums decay as the others, so that all keep the same weights
        for (let k = zo; k < zo + dd; k++) Z[k] = decay * Z[k]!;
        for (let k = co; k < co + ee; k++) C[k] = mu * C[k]!;
        continue;
      }
      const zl = t === 0 ? z : zr.subarray((t - 1) * d, t * d);
      const xl = t === 0 ? x : xr.subarray((t - 1) * e, t * e);
      for (let i = 0; i < d; i++) {
        const zi = lagWeight * z[i]!;
        for (let j = 0; j < d; j++) Z[zo + i * d + j] = decay * Z[zo + i * d + j]! + zi * zl[j]!;
      }
      for (let i = 0; i < e; i++) {
        const xi = x[i]!;
        for (let j = 0; j < e; j++) C[co + i * e + j] = mu * C[co + i * e + j]! + xi * xl[j]!;
      }
    }
    if (lags > 0) {
      zr.copyWithin(d, 0, (lags - 1) * d);
      zr.set(z, 0);
      xr.copyWithin(e, 0, (lags - 1) * e);
      xr.set(x, 0);
    }
    this.weight = lam * this.weight + 1;
    this.noiseWeight = mu * this.noiseWeight + 1;
    this.count++;
  }

  /** Empties the sums (the samples so far came from instruments that no longer apply). */
  reset(): void {
    this.Z.fill(0);
    this.C.fill(0);
    this.zr.fill(0);
    this.xr.fill(0);
    this.weight = 0;
    this.noiseWeight = 0;
    this.count = 0;
  }

  /** Whether the sums hold enough informative samples for the covariance. */
  ready(): boolean {
    return this.weight >= HAC_MIN_PER_PARAMETER * this.d;
  }

  /** The noise autocovariance gamma(t) of the residuals of theta, t = 0..lags. */
  autocovariance(theta: ArrayLike<number>): Float64Array {
    const { d, e, lags, C } = this;
    const beta = new Float64Array(e);
    beta[0] = 1;
    for (let a = 0; a < d; a++) beta[a + 1] = -theta[a]!;
    const g = new Float64Array(lags + 1);
    for (let t = 0; t <= lags; t++) {
      const off = t * e * e;
      let s = 0;
      for (let a = 0; a < e; a++) {
        let r = 0;
        for (let b = 0; b < e; b++) r += C[off + a * e + b]! * beta[b]!;
        s += beta[a]! * r;
      }
      g[t] = this.noiseWeight > 0 ? s / this.noiseWeight : 0;
    }
    return g;
  }

  /** S at the estimate theta (class comment), projected to the nearest positive semi-definite matrix. */
  psd(theta: ArrayLike<number>): Float64Array {
    const { d, lags, Z } = this;
    const gamma = this.autocovariance(theta);
    const S = new Float64Array(d * d);
    for (let t = 0; t <= lags; t++) {
      const off = t * d * d;
      const g = gamma[t]!;
      for (let i = 0; i < d; i++) {
        for (let j = 0; j < d; j++) {
          const s = g * Z[off + i * d + j]!;
          S[i * d + j] = S[i * d + j]! + s;
          if (t > 0) S[j * d + i] = S[j * d + i]! + s;
        }
      }
    }
    return nearestPsd(S, d);
  }

  toJSON(): ScoreSumState {
    return { Z: Array.from(this.Z), C: Array.from(this.C), zr: Array.from(this.zr), xr: Array.from(this.xr), weight: this.weight, noiseWeight: this.noiseWeight, count: this.count };
  }

  /** Restores a checkpointed sum; one from before the noise autocovariance sums (no `Z`) starts empty. */
  load(s: ScoreSumState, arr: (name: string, v: unknown, len: number) => number[], num: (name: string, v: unknown) => number): void {
    if (s.Z === undefined || s.noiseWeight === undefined) {
      this.reset();
      return;
    }
    this.Z.set(arr("hac.Z", s.Z, this.Z.length));
    this.C.set(arr("hac.C", s.C, this.C.length));
    this.zr.set(arr("hac.zr", s.zr, this.zr.length));
    this.xr.set(arr("hac.xr", s.xr, this.xr.length));
    this.weight = num("hac.weight", s.weight);
    this.noiseWeight = num("hac.noiseWeight", s.noiseWeight);
    this.count = num("hac.count", s.count);
  }
}

/**
 * The covariance of [a, b] (nested d x d): R^-1 S R^-T with the HAC sum at `theta` once `scores`
 * is ready and the result is positive on the diagonal (its squared weights are exact), else
 * s2 R^-1 Szz R^-T times `factor` (the weighted least-squares factor of the caller, which takes
 * the squared weights of Szz as proportional to its weights). NaN entries when R is singular.
 */
export function ivCovariance(R: Float64Array, Szz: Float64Array, scores: ScoreSum, theta: ArrayLike<number>, s2: number, factor: number, d: number): number[][] {
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

/**
 * Parameter covariance of the instrumental-variable estimate (lib/control/riv.ts).
 *
 * The IV estimate theta = R^-1 f, R = sum w z phi', has the asymptotic covariance of a sandwich,
 * not the least-squares sigma^2 (sum phi phi')^-1: R^-1 S R^-T with S the covariance of the
 * score sum, sum w z(k) v(k) (Söderström & Stoica, *System Identification*, 1989, sec. 8.2, the
 * IV covariance theorem, from memory: with v = H(q) e, e white of variance sigma^2,
 * P = sigma^2 R^-1 E[z~ z~'] R^-T where z~(k) = sum_i h_i z(k+i)). Here S is estimated from the
 * data by a heteroscedasticity-and-autocorrelation-consistent sum of the scores g(k) = z(k) e(k)
 * (e the a-priori residual): g g' plus the cross products with the previous na scores, truncated
 * kernel (Newey & West, Econometrica 55, 1987, for the form; the lag count is that of the equation
 * error A(q) n of white PV noise n, an MA(na) process). The truncated kernel's sum need not be
 * positive semi-definite (over half of the open-loop runs): its negative eigenvalues are set to
 * zero (nearest PSD matrix in the Frobenius norm; Higham, Linear Algebra Appl. 103, 1988).
 *
 * The white-equation-error form sigma^2 R^-1 Szz R^-T overstates the spread when v = A(q) n
 * (measured open loop, white MV: 95 % intervals covered 100 % with it, sd 2x too large) and
 * serves only until the HAC sum has `HAC_MIN_PER_PARAMETER` informative samples per parameter.
 * Both are scaled as for weighted least squares (see `ArxEstimator.parameterCovariance`).
 */
import { invert, nearestPsd } from "./linalg";

/** Effective informative samples per parameter before the HAC covariance replaces the white-noise one. */
export const HAC_MIN_PER_PARAMETER = 10;

/** Its part of the estimator's checkpoint. */
export interface ScoreSumState {
  S: number[];
  g: number[];
  weight: number;
  count: number;
}

/** The HAC sum of the scores g = z e (forgetting as the IV sums), lag ring newest first. */
export class ScoreSum {
  /** Decayed count of the scores in the sum. */
  weight = 0;
  private count = 0;
  private readonly S: Float64Array;
  private readonly G: Float64Array;
  private readonly g: Float64Array;

  constructor(private readonly d: number, private readonly lags: number) {
    this.S = new Float64Array(d * d);
    this.G = new Float64Array(lags * d);
    this.g = new Float64Array(d);
  }

  /** Adds the score z e of one informative sample with forgetting factor lam. */
  add(z: Float64Array, e: number, lam: number): void {
    const { d, lags, g, S, G } = this;
    for (let i = 0; i < d; i++) g[i] = z[i]! * e;
    const n = Math.min(lags, this.count);
    for (let i = 0; i < d; i++) {
      for (let j = 0; j < d; j++) {
        let s = g[i]! * g[j]!;
        for (let t = 0; t < n; t++) s += g[i]! * G[t * d + j]! + G[t * d + i]! * g[j]!;
        S[i * d + j] = lam * S[i * d + j]! + s;
      }
    }
    if (lags > 0) {
      G.copyWithin(d, 0, (lags - 1) * d);
      G.set(g, 0);
    }
    this.weight = lam * this.weight + 1;
    this.count++;
  }

  /** Empties the sum (the scores so far came from instruments that no longer apply). */
  reset(): void {
    this.S.fill(0);
    this.G.fill(0);
    this.weight = 0;
    this.count = 0;
  }

  /** Whether the sum holds enough samples to replace the white-noise form. */
  ready(): boolean {
    return this.weight >= HAC_MIN_PER_PARAMETER * this.d;
  }

  /** The sum projected to the nearest positive semi-definite matrix. */
  psd(): Float64Array {
    return nearestPsd(this.S, this.d);
  }

  toJSON(): ScoreSumState {
    return { S: Array.from(this.S), g: Array.from(this.G), weight: this.weight, count: this.count };
  }

  load(s: ScoreSumState, arr: (name: string, v: unknown, len: number) => number[], num: (name: string, v: unknown) => number): void {
    this.S.set(arr("hac.S", s.S, this.d * this.d));
    this.G.set(arr("hac.g", s.g, this.G.length));
    this.weight = num("hac.weight", s.weight);
    this.count = num("hac.count", s.count);
  }
}

/**
 * The covariance of [a, b] (nested d x d): R^-1 S R^-T with the HAC sum once `scores` is ready and
 * the result is positive on the diagonal, else s2 R^-1 Szz R^-T; both times `factor` (the weighted
 * least-squares factor of the caller). NaN entries when R is singular.
 */
export function ivCovariance(R: Float64Array, Szz: Float64Array, scores: ScoreSum, s2: number, factor: number, d: number): number[][] {
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
    const cov = sandwich(scores.psd(), factor);
    if (cov.every((row, i) => row[i]! > 0)) return cov;
  }
  return sandwich(Szz, s2 * factor);
}

/**
 * A drift of the plant's gain, not of its poles, unless the data say otherwise (docs/domain.md §7).
 * The linear drift fit (./parameter-drift.ts) frees the rate of every ARX parameter, a and b alike.
 * When only the gain moves (a gain drift scales B(q) alone) the rates of a carry no drift, only
 * noise, and the closed-loop radius is sensitive to a: through the rim forecast's harness
 * (docs/domain.md §7) they made about half the variance of the radius's rate. Given the
 * unrestricted estimate x = [theta, rate] and its covariance C, the rates
 * of a_1..a_na are set to zero by the minimum-distance (optimally weighted) restriction
 *   x_r = x - C R' (R C R')^-1 R x,   C_r = C - C R' (R C R')^-1 R C,
 * R selecting those rates (the restricted estimator that uses C as its weight: Newey & McFadden,
 * *Handbook of Econometrics* vol. 4, 1994, ch. 36 sec. 5, and Theil's mixed estimation; from
 * memory). It is kept only while the Wald statistic (R x)' (R C R')^-1 (R x) stays below the
 * chi-square quantile of na degrees of freedom at `confidence` (default 0.99): a plant whose
 * poles really drift (a time constant that grows with fouling) keeps the free fit.
 */
import { ControlArgumentError } from "./errors";
import { normalQuantile } from "./confidence";
import { invert } from "./linalg";
import type { DriftEstimate } from "./parameter-drift";

export interface DriftRestriction {
  /** The estimate used: restricted when `restricted`, else the one given. */
  estimate: DriftEstimate;
  /** Wald statistic of "the rates of a are zero"; NaN when R C R' is singular. */
  wald: number;
  restricted: boolean;
}

/**
 * Quantile of the chi-square distribution with k degrees of freedom at probability p: exact for
 * k = 1 (the square of a normal quantile) and k = 2 (an exponential, -2 ln(1 - p)); beyond, the
 * Wilson–Hilferty cube-root normal approximation (Wilson & Hilferty, *PNAS* 17, 1931), within 1 %
 * at p = 0.95 and 0.99 (checked against scipy.stats.chi2.ppf).
 */
export function chiSquareQuantile(p: number, k: number): number {
  if (!(k >= 1) || !Number.isInteger(k)) throw new ControlArgumentError(`k must be an integer >= 1, got ${k}`);
  if (!(p > 0 && p < 1)) throw new ControlArgumentError(`p must be in (0, 1), got ${p}`);
  if (k === 1) return normalQuantile(0.5 + p / 2) ** 2;
  if (k === 2) return -2 * Math.log(1 - p);
  const v = 2 / (9 * k);
  return k * (1 - v + normalQuantile(p) * Math.sqrt(v)) ** 3;
}

/**
 * The estimate with the rates of the first `na` parameters (a_1..a_na) restricted to zero, unless
 * the Wald test rejects that at `confidence` (module doc). na = 0: the estimate unchanged.
 */
export function restrictPoleDrift(est: DriftEstimate, na: number, confidence = 0.99): DriftRestriction {
  const d = est.theta.length;
  if (!Number.isInteger(na) || na < 0 || na > d) throw new ControlArgumentError(`na must be an integer in [0, ${d}], got ${na}`);
  if (na === 0) return { estimate: est, wald: 0, restricted: false };
  const p = 2 * d;
  const C = est.covariance;
  const x = new Float64Array(p);
  x.set(est.theta);
  x.set(est.rate, d);
  // rows of R: the rates of a_1..a_na, at indices d..d + na - 1
  const RCR = new Float64Array(na * na);
  for (let i = 0; i < na; i++) for (let j = 0; j < na; j++) RCR[i * na + j] = C[(d + i) * p + d + j]!;
  const W = invert(RCR, na);
  if (!W) return { estimate: est, wald: NaN, restricted: false };
  const Rx = x.subarray(d, d + na);
  // u = (R C R')^-1 R x; wald = (R x)' u
  const u = new Float64Array(na);
  let wald = 0;
  for (let i = 0; i < na; i++) {
    for (let j = 0; j < na; j++) u[i]! += W[i * na + j]! * Rx[j]!;
    wald += Rx[i]! * u[i]!;
  }
  if (!(wald <= chiSquareQuantile(confidence, na))) return { estimate: est, wald, restricted: false };
  // C R' is the columns d..d + na - 1 of C
  const xr = Float64Array.from(x);
  const Cr = Float64Array.from(C);
  for (let i = 0; i < p; i++) {
    for (let a = 0; a < na; a++) xr[i]! -= C[i * p + d + a]! * u[a]!;
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let a = 0; a < na; a++) for (let b = 0; b < na; b++) s += C[i * p + d + a]! * W[a * na + b]! * C[(d + b) * p + j]!;
      Cr[i * p + j]! -= s;
    }
  }
  // exact zeros where the restriction holds (rounding would leave ~1e-30)
  for (let a = 0; a < na; a++) {
    xr[d + a] = 0;
    for (let j = 0; j < p; j++) Cr[(d + a) * p + j] = Cr[j * p + d + a] = 0;
  }
  const estimate: DriftEstimate = { ...est, theta: xr.slice(0, d), rate: xr.slice(d), covariance: Cr };
  return { estimate, wald, restricted: true };
}

/**
 * Damping of the loop's own mode from routine data: the autocorrelation decay ratio of Miao &
 * Seborg, "Automatic detection of excessively oscillatory feedback control loops", IEEE Conf. on
 * Control Applications (1999; from memory), taken on the differenced error.
 *
 * Miao & Seborg read the damping from the ACF: with its first minimum m1, the following maximum p1
 * and the next minimum m2, a is the height of p1 above the line through m1 and m2, b the depth of
 * m1 below the line from lag 0 to p1, and R = a / b. For a damped oscillation ρ(k) = r^k cos(ωk)
 * the construction gives R = r^(π/ω) = √DR exactly (DR the decay ratio per period; worked out in
 * tests/assessment/acf-decay.test.ts), so R = 0.5 is quarter-amplitude damping, DR = 0.25 (the
 * classic target of Ziegler & Nichols 1942; common practice; Miao & Seborg flag R above 0.5, from
 * memory). The lines make the figure indifferent to a slow trend of the ACF.
 *
 * Why the differenced error (ours, after the idea of Salsbury, "A practical method for assessing
 * the performance of control loops subject to random load changes", J. Process Control 15, 2005,
 * from memory: with step-like loads the increments of the error are the loop's own load responses
 * driven by sparse impulses): under slow, coloured loads the error's ACF is dominated by the load's
 * colour, which hides a mildly underdamped mode (the benchmark and the cross-check set read decay
 * ratios of 0.33–0.5 as healthy that way). Differencing flattens the load's low-frequency part; block
 * means over a fifteenth of the loop's time scale (as for the disturbance model, closed-loop.ts) and
 * the known share of white measurement noise taken out of lags 0 and 1 keep that noise (whose
 * increments correlate −0.5 at lag 1 and not beyond) from biasing b. The extrema are taken with a
 * hysteresis of max(2/√N, 0.05) (2/√N: twice the ACF's standard error under no correlation,
 * Bartlett; 0.05 ours, so the wiggles of a fast, well-damped mode, such as the ring of poles a
 * sampled dead time gives, are not read as the loop's swing). The diagnosis judges R less 1.645
 * standard deviations (Bartlett's formula; about 95 % one-sided), so a short window makes no finding.
 */

import { decimate } from "./closed-loop";
import { autocovariance } from "./signal";

export interface AcfDecay {
  /** Miao–Seborg R = a / b (≈ √DR). */
  ratio: number;
  /** Decay ratio per period, R². */
  decayRatio: number;
  /** Lag of the first minimum and of the following maximum, s. */
  troughS: number;
  periodS: number;
  /** Depth b of the first minimum below the line from lag 0 to the next maximum. */
  depth: number;
  /** Standard error of the ACF at the swing's lags (Bartlett's formula), and of R. */
  standardError: number;
  ratioSd: number;
}

/**
 * Miao–Seborg's construction on an ACF (ρ(0) = 1), extrema found with hysteresis `h` from lag
 * `from`: the first trough m1, the following peak p1 and the next trough m2; a = height of p1
 * above the line m1–m2, b = depth of m1 below the line from lag 0 to p1, R = a / b (≈ √DR).
 * Null without the three extrema.
 */
export function miaoSeborgRatio(
  acf: ArrayLike<number>,
  h: number,
  from = 1,
): { ratio: number; m1: number; p1: number; m2: number; depth: number } | null {
  const n = acf.length;
  // Alternate: lowest point until the ACF has risen h above it, highest until it has fallen h below.
  const ext: number[] = [];
  let want: "min" | "max" = "min";
  let at = from;
  for (let k = from; k < n && ext.length < 3; k++) {
    const v = acf[k]!;
    if (want === "min") {
      if (v < acf[at]!) at = k;
      else if (v > acf[at]! + h) {
        ext.push(at);
        want = "max";
        at = k;
      }
    } else {
      if (v > acf[at]!) at = k;
      else if (v < acf[at]! - h) {
        ext.push(at);
        want = "min";
        at = k;
      }
    }
  }
  if (ext.length < 3) return null;
  const [m1, p1, m2] = ext as [number, number, number];
  const line = (i: number, j: number, k: number) => acf[i]! + ((acf[j]! - acf[i]!) * (k - i)) / (j - i);
  const b = line(0, p1, m1) - acf[m1]!;
  const a = acf[p1]! - line(m1, m2, p1);
  if (!(b > 0)) return null;
  return { ratio: Math.max(0, a / b), m1, p1, m2, depth: b };
}

/** Least hysteresis of the extrema, and least lags per period for the ACF to resolve a swing (ours). */
const MIN_SWING = 0.05;
const MIN_PERIOD_LAGS = 4;

/**
 * The ACF decay ratio of the differenced error over constant-set-point stretches: block means of
 * d samples (lowered until the stretches give at least 400 blocks), first differences within each
 * stretch, autocovariances pooled over the stretches (no products across a boundary).
 */
export function differencedErrorDecay(
  e: Float64Array,
  stretches: readonly [number, number][],
  T: number,
  d: number,
  noiseSigma = 0,
  maxLag = 200,
): AcfDecay | null {
  let stretched = 0;
  for (const [s, t] of stretches) stretched += t - s;
  d = Math.max(1, Math.min(d, Math.floor(stretched / 400)));
  const segs: Float64Array[] = [];
  let total = 0;
  for (const [s, t] of stretches) {
    const b = decimate(e.subarray(s, t), d);
    if (b.length < 20) continue;
    const dx = new Float64Array(b.length - 1);
    let m = 0;
    for (let i = 1; i < b.length; i++) m += dx[i - 1] = b[i]! - b[i - 1]!;
    m /= dx.length;
    for (let i = 0; i < dx.length; i++) dx[i] = dx[i]! - m;
    segs.push(dx);
    total += dx.length;
  }
  const lags = Math.min(maxLag, Math.floor(total / 4));
  if (total < 200 || lags < 8) return null;
  const c = new Float64Array(lags + 1);
  // Lagged products summed within each stretch (by FFT: signal.ts), pooled over the stretches.
  for (const x of segs) {
    const cx = autocovariance(x, lags);
    for (let k = 0; k < cx.length; k++) c[k] = c[k]! + cx[k]! * x.length;
  }
  // White measurement noise of sd σ adds 2σ²/d to the block increments' variance and −σ²/d at
  // lag 1 and nothing beyond (common practice); taken out so lag 0 carries the loop's swing only.
  // At most half of lag 0 is removed (the noise estimate also holds fast process moves).
  const white = Math.min((noiseSigma * noiseSigma) / d, c[0]! / total / 4);
  c[0] = c[0]! - 2 * white * total;
  c[1] = c[1]! + white * total;
  if (!(c[0]! > 0)) return null;
  for (let k = lags; k >= 0; k--) c[k] = c[k]! / c[0]!;
  const ms = miaoSeborgRatio(c, Math.max(2 / Math.sqrt(total), MIN_SWING));
  if (!ms || ms.p1 < MIN_PERIOD_LAGS) return null;
  // Bartlett's formula for the variance of an autocorrelation beyond the lags where the true ACF
  // is taken as nonzero: (1 + 2 Σ ρ²(j)) / N (Box, Jenkins & Reinsel, Time Series Analysis; sums up
  // to the second trough). a and b each carry about one such error, so R = a/b has
  // sd(R) ≈ se · √(1 + R²) / b (first-order error propagation, common practice).
  let s2 = 0;
  for (let j = 1; j <= ms.m2; j++) s2 += c[j]! * c[j]!;
  const se = Math.sqrt((1 + 2 * s2) / total);
  const R = ms.ratio;
  const ratioSd = (se * Math.sqrt(1 + R * R)) / ms.depth;
  const Tb = T * d;
  return { ratio: R, decayRatio: R * R, troughS: ms.m1 * Tb, periodS: ms.p1 * Tb, depth: ms.depth, standardError: se, ratioSd };
}

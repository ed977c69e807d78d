/**
 * When the closed loop of a drifting plant reaches the unit circle (docs/domain.md §7): from a
 * linear parameter drift theta(t) = theta + rate (t - t_last) and the covariance of
 * [theta, rate] (./parameter-drift.ts), the closed-loop spectral radius now, rho = rho(theta)
 * under the loop's controller (characteristic polynomial A D + q^-nk B N, ./closed-loop.ts), and
 * its rate now, g' rate with g = d rho / d theta (forward differences). `at` is where the radius's
 * tangent line rho + (g' rate) (t - t_last) reaches `level`; its interval is the inverse-prediction
 * (Fieller-type) interval of that line (./forecast.ts `fiellerRoots`; Draper & Smith, *Applied
 * Regression Analysis*, 3rd ed., 1998, sec. 3.2), with var(rho) = g' C_theta g, var(rate) =
 * g' C_rate g and their covariance g' C_theta,rate g (the delta method, common practice). No
 * forecast unless the radius's rate is significant, |g' rate| / sd > q, and moves towards the
 * level: a loop without drift stays quiet.
 *
 * Why the tangent and not the radius along theta(t): on the harness's two drifts (docs/domain.md
 * §7) a linear radius needs a gain that accelerates, which theta(t) extrapolated linearly forecasts
 * about 11 % late (80 runs: within +-15 % 63.7 % against 71.3 % with the tangent); a linear gain
 * creep bends the radius towards the rim, which the tangent forecasts about 7 % early.
 */
import { closedLoopArxInto } from "./closed-loop";
import { normalQuantile } from "./confidence";
import { fiellerRoots, type CrossingForecast } from "./forecast";
import { polyRootsInto } from "./roots";
import type { QTf } from "./types";
import type { DriftEstimate } from "./parameter-drift";

/** The crossing as ./forecast.ts gives it (times in seconds), and the radius of theta(t_last). */
export type DriftCrossing = Pick<CrossingForecast, "at" | "low" | "high" | "slope" | "slopeStd" | "tStat"> & { radius: number };

export interface DriftCrossingOptions {
  /** Level of the radius; default 1. */
  level?: number;
  /** Two-sided confidence of the interval and the rate test; default 0.95. */
  confidence?: number;
  /** Latest crossing reported, seconds after the last sample; default 10 x the window's span. */
  maxHorizon?: number;
}

/** The plant structure of the estimate: theta = [a1..a_na, b0..b_{nb-1}], delay nk samples. */
export interface DriftStructure {
  na: number;
  nb: number;
  nk: number;
}

/**
 * The crossing forecast, or null when the rate is not significant, the radius is beyond the
 * level or moves away from it (as ./forecast.ts), or the crossing lies beyond the horizon.
 */
export function driftCrossing(est: DriftEstimate, s: DriftStructure, controller: QTf, o: DriftCrossingOptions = {}): DriftCrossing | null {
  const level = o.level ?? 1;
  const q = normalQuantile(0.5 + (o.confidence ?? 0.95) / 2);
  const horizon = o.maxHorizon ?? 10 * (est.t - est.tFirst);
  const { rho, g } = radiusGradient(est.theta, s, controller);
  if (!Number.isFinite(rho) || !g.every(Number.isFinite)) return null;
  const d = g.length;
  // g' C g over the blocks of cov [theta, rate]: (0, 0) the radius, (d, d) its rate, (0, d) both
  const quad = (r0: number, c0: number) => {
    let x = 0;
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) x += g[i]! * est.covariance[(r0 + i) * 2 * d + c0 + j]! * g[j]!;
    return x;
  };
  let slope = 0;
  for (let i = 0; i < d; i++) slope += g[i]! * est.rate[i]!;
  const slopeStd = Math.sqrt(Math.max(0, quad(d, d)));
  const tStat = slopeStd > 0 ? slope / slopeStd : Math.sign(slope) * Infinity;
  if (!(Math.abs(tStat) > q)) return null;
  const gap = level - rho;
  if (gap * slope <= 0 && gap !== 0) return null;
  const [r1, r2] = fiellerRoots(gap, slope, Math.max(0, quad(0, 0)), quad(0, d), slopeStd * slopeStd, q);
  const at = gap / slope;
  if (at > horizon) return null;
  return { at: est.t + at, low: est.t + r1, high: est.t + r2, slope, slopeStd, tStat, radius: rho };
}

/** The closed-loop spectral radius at theta and its gradient by forward differences. */
function radiusGradient(theta: Float64Array, s: DriftStructure, c: QTf): { rho: number; g: Float64Array } {
  const len = Math.max(s.na + c.den.length, s.nk + s.nb + c.num.length - 1) + 1;
  const coeffs = new Float64Array(len);
  const re = new Float64Array(len);
  const im = new Float64Array(len);
  const radius = (th: Float64Array) => {
    const n = closedLoopArxInto(th, s.na, s.nb, s.nk, c.num, c.den, coeffs);
    for (let i = 0; i < n; i++) if (!Number.isFinite(coeffs[i]!)) return NaN;
    const m = polyRootsInto(coeffs, re, im, n);
    let r = 0;
    for (let i = 0; i < m; i++) r = Math.max(r, Math.hypot(re[i]!, im[i]!));
    return r;
  };
  const th = Float64Array.from(theta);
  const rho = radius(th);
  const g = new Float64Array(th.length);
  for (let i = 0; i < th.length; i++) {
    const h = 1e-6 * Math.max(1, Math.abs(th[i]!));
    th[i] = theta[i]! + h;
    g[i] = (radius(th) - rho) / h;
    th[i] = theta[i]!;
  }
  return { rho, g };
}

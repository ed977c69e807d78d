/**
 * When will a slowly drifting quantity (the spectral radius) reach a level (e.g. a rim threshold)?
 *
 * Method: ordinary least-squares line value = alpha + beta (t - tbar) through the points in the
 * window; the covariance of (alpha, beta) is the Newey–West heteroskedasticity-and-autocorrelation
 * consistent (HAC) estimate with Bartlett weights (Newey & West, *Econometrica* 55(3), 1987),
 * because successive radius estimates from a recursive estimator are strongly autocorrelated
 * (they share the estimator's memory). The lag is the larger of the usual rule
 * floor(4 (N/100)^(2/9)) (Newey & West 1994) and the estimator memory in points.
 *
 * `at` is where the fitted line reaches `level`; `low`/`high` are the times where the two-sided
 * confidence band of the line reaches it, i.e. the Fieller-type inverse-prediction interval
 * (Draper & Smith, *Applied Regression Analysis*, 3rd ed., 1998, sec. 3.2), solved in closed form:
 *   (alpha - level + beta tau)^2 = q^2 (V_alpha + 2 tau C + tau^2 V_beta),  tau = t - tbar.
 * The interval is finite exactly when the slope is significant (|beta| / sd(beta) > q).
 *
 * Few independent points: a window of ~20 estimator memories holds only about ten independent
 * stretches, and Bartlett weights with a lag of one memory recover only about 40 % of the
 * long-run variance of residuals correlated over that memory (the integral of (1 - x) e^-x over
 * [0, 1]); the interval covered ~70 % instead of 95 % on the rim-forecast drift. So the
 * variances are floored by the AR(1) form: residuals e(t) with lag-1 correlation rho (the larger
 * of e^(-dt / memory), the estimator's own exponential memory, and the residuals' sample value)
 * inflate the i.i.d. variances by (1 + rho) / (1 - rho) (common practice; e.g. Box, Jenkins &
 * Reinsel, *Time Series Analysis*, 4th ed., 2008, on regression with autocorrelated errors), the
 * effective number of points is N (1 - rho) / (1 + rho), and q is the Student-t quantile with
 * the degrees of freedom of the residual variance, N (1 - rho^2) / (1 + rho^2) - 2, instead of
 * the normal one.
 *
 * Weights and delay (docs/domain.md §7): a point may carry the standard deviation of its own value
 * (`sd`, e.g. the delta-method sd of a radius). The line is then fitted by weighted least squares
 * with w = 1 / max(sd, half the window's median sd)^2 (the floor keeps a point whose delta-method
 * sd collapses, as it does where two poles meet, from owning the fit); a point without an sd gets
 * the median. Weighted, every sum above is the weighted one: tbar and the bread use sum w, the
 * HAC scores are w e x, the AR(1) floor uses the weighted residual variance sum w e^2 / (N - 2),
 * and the effective N of the degrees of freedom is Kish's (sum w)^2 / sum w^2. With every weight
 * equal this is the unweighted fit above. `delay` (seconds) says that each value describes the
 * quantity as it was `delay` seconds before its time stamp (an exponentially forgetting estimator
 * lags a ramp by about one memory, the mean age of its data lambda / (1 - lambda) samples; common
 * practice): the points are moved back by it before the fit, so the crossing is in true time.
 */
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import { normalQuantile } from "./confidence";

/** Largest lag-1 correlation used for the AR(1) floor (1 would mean no information at all). */
const MAX_RHO = 0.995;

export interface ForecastOptions {
  /** Two-sided confidence of the interval and of the slope test; default 0.95. */
  confidence?: number;
  /** Estimator memory in seconds (e.g. T / (1 - lambda)); sets the default minSpan and HAC lag. */
  memory?: number;
  /** Use only points with t >= last t - window (seconds); default: all points. */
  window?: number;
  /** Shortest span last t - first t (seconds) to forecast from; default max(600, 10 * memory). */
  minSpan?: number;
  /** Fewest points; default 20. */
  minPoints?: number;
  /** Return null when the crossing is more than this many seconds after the last point; default 10 x the span used. */
  maxHorizon?: number;
  /** Newey–West lag in points; default as in the module comment. */
  lag?: number;
  /** Seconds by which each value lags the quantity it estimates (module doc); default 0. */
  delay?: number;
}

/** A point of the series; `sd` (same units as value, > 0) weights it (module doc). */
export interface TrendPoint {
  t: number;
  value: number;
  sd?: number;
}

export interface CrossingForecast {
  /** Time (s, same clock as the points) at which the trend line reaches the level. */
  at: number;
  /** Earliest time consistent with the confidence band. */
  low: number;
  /** Latest time consistent with the confidence band. */
  high: number;
  /** Trend slope, value units per second. */
  slope: number;
  /** HAC standard deviation of the slope. */
  slopeStd: number;
  /** slope / slopeStd. */
  tStat: number;
  /** Points used and the HAC lag. */
  points: number;
  lag: number;
  /** Effective number of independent points, N (1 - rho) / (1 + rho) (module doc). */
  effectivePoints: number;
}

/**
 * Forecast the time at which the linear trend of `points` (t in seconds, strictly increasing;
 * value finite) reaches `level`, or null when the span or the number of points is too small,
 * the slope is not significant at `confidence`, the trend moves away from the level, or the
 * crossing lies beyond `maxHorizon`. If the trend line already crossed within the data, `at`
 * is at or before the last point.
 */
export function forecastCrossing(
  points: readonly TrendPoint[],
  level: number,
  options: ForecastOptions = {},
): CrossingForecast | null {
  if (!Number.isFinite(level)) throw new NonFiniteInputError("level");
  for (let i = 0; i < points.length; i++) {
    const p = points[i]!;
    if (!Number.isFinite(p.t)) throw new NonFiniteInputError(`points[${i}].t`);
    if (!Number.isFinite(p.value)) throw new NonFiniteInputError(`points[${i}].value`);
    if (i > 0 && !(p.t > points[i - 1]!.t)) throw new ControlArgumentError(`points must have strictly increasing t (index ${i})`);
    if (p.sd !== undefined) {
      if (!Number.isFinite(p.sd)) throw new NonFiniteInputError(`points[${i}].sd`);
      if (!(p.sd > 0)) throw new ControlArgumentError(`points[${i}].sd must be > 0 when given, got ${p.sd}`);
    }
  }
  const delay = options.delay ?? 0;
  if (!Number.isFinite(delay) || delay < 0) throw new ControlArgumentError(`delay must be >= 0 seconds, got ${delay}`);
  const conf = options.confidence ?? 0.95;
  if (!(conf > 0 && conf < 1)) throw new ControlArgumentError(`confidence must be in (0, 1), got ${conf}`);
  const memory = options.memory ?? 0;
  if (!(memory >= 0)) throw new ControlArgumentError(`memory must be >= 0 seconds, got ${memory}`);
  const minSpan = options.minSpan ?? Math.max(600, 10 * memory);
  const minPoints = Math.max(3, options.minPoints ?? 20);
  if (points.length === 0) return null;
  const tLast = points[points.length - 1]!.t;
  const from = options.window !== undefined ? tLast - options.window : -Infinity;
  let first = 0;
  while (first < points.length && points[first]!.t < from) first++;
  const N = points.length - first;
  if (N < minPoints) return null;
  const span = tLast - points[first]!.t;
  if (span < minSpan || span <= 0) return null;
  const maxHorizon = options.maxHorizon ?? 10 * span;

  // weights (module doc), scaled to sum to N so that every unweighted formula keeps its form
  const w = pointWeights(points, first, N);
  let tbar = 0;
  let vbar = 0;
  for (let i = 0; i < N; i++) {
    const p = points[first + i]!;
    tbar += w[i]! * (p.t - delay);
    vbar += w[i]! * p.value;
  }
  tbar /= N;
  vbar /= N;
  let sxx = 0;
  let sxy = 0;
  for (let i = 0; i < N; i++) {
    const p = points[first + i]!;
    const dt = p.t - delay - tbar;
    sxx += w[i]! * dt * dt;
    sxy += w[i]! * dt * (p.value - vbar);
  }
  const beta = sxy / sxx;
  const alpha = vbar;
  const x = new Float64Array(N);
  // we: the weighted residual w e (the HAC score's factor); z: sqrt(w) e (standardised residual)
  const we = new Float64Array(N);
  const z = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    const p = points[first + i]!;
    x[i] = p.t - delay - tbar;
    const e = p.value - alpha - beta * x[i]!;
    we[i] = w[i]! * e;
    z[i] = Math.sqrt(w[i]!) * e;
  }
  let lag = options.lag;
  if (lag === undefined) {
    const dtMean = span / (N - 1);
    lag = Math.max(Math.floor(4 * (N / 100) ** (2 / 9)), Math.ceil(memory / dtMean));
  }
  if (!Number.isInteger(lag) || lag < 0) throw new ControlArgumentError(`lag must be an integer >= 0, got ${lag}`);
  lag = Math.min(lag, N - 1);
  // Meat S = sum_l k_l sum_t g_t g_{t-l}' + g_{t-l} g_t', scores g_t = w_t e_t [1, tau_t].
  let s00 = 0;
  let s01 = 0;
  let s11 = 0;
  for (let t = 0; t < N; t++) {
    const ee = we[t]! * we[t]!;
    s00 += ee;
    s01 += ee * x[t]!;
    s11 += ee * x[t]! * x[t]!;
  }
  for (let l = 1; l <= lag; l++) {
    const k = 1 - l / (lag + 1);
    let a00 = 0;
    let a01 = 0;
    let a11 = 0;
    for (let t = l; t < N; t++) {
      const ee = we[t]! * we[t - l]!;
      a00 += 2 * ee;
      a01 += ee * (x[t]! + x[t - l]!);
      a11 += 2 * ee * x[t]! * x[t - l]!;
    }
    s00 += k * a00;
    s01 += k * a01;
    s11 += k * a11;
  }
  // Bread (X'WX)^-1 = diag(1/N, 1/sxx) because tau is centred and sum w = N; small-sample factor N/(N-2).
  const f = N / (N - 2);
  let vAlpha = (f * s00) / (N * N);
  let cov = (f * s01) / (N * sxx);
  let vBeta = (f * s11) / (sxx * sxx);
  // AR(1) floor (module doc): rho from the estimator memory or the residuals, whichever is larger
  const dtMean = span / (N - 1);
  let e0 = 0;
  let e1 = 0;
  let w2 = 0;
  for (let t = 0; t < N; t++) {
    e0 += z[t]! * z[t]!;
    if (t > 0) e1 += z[t]! * z[t - 1]!;
    w2 += w[t]! * w[t]!;
  }
  const rhoData = e0 > 0 ? e1 / e0 : 0;
  const rho = Math.min(MAX_RHO, Math.max(0, rhoData, memory > 0 ? Math.exp(-dtMean / memory) : 0));
  const inflation = (1 + rho) / (1 - rho);
  const s2 = e0 / (N - 2);
  const vAlphaAr = (s2 * inflation) / N;
  const vBetaAr = (s2 * inflation) / sxx;
  if (vBetaAr > vBeta || vAlphaAr > vAlpha) {
    vAlpha = Math.max(vAlpha, vAlphaAr);
    vBeta = Math.max(vBeta, vBetaAr);
    cov = 0; // tau is centred: the AR(1) form has no alpha-beta covariance
  }
  // Kish's effective number of weighted points, (sum w)^2 / sum w^2 (= N with equal weights)
  const kish = (N * N) / w2;
  const effective = kish / inflation;
  const slopeStd = Math.sqrt(Math.max(vBeta, 0));
  // degrees of freedom of s2 from correlated residuals: var(s2) ~ 2 s2^2 (1 + rho^2) / (N (1 - rho^2))
  // (Bartlett's formula for the variance of a sample variance under AR(1); from memory)
  const dof = Math.max(1, (kish * (1 - rho * rho)) / (1 + rho * rho) - 2);
  const q = studentQuantile(0.5 + conf / 2, dof);
  const tStat = slopeStd > 0 ? beta / slopeStd : beta === 0 ? 0 : Math.sign(beta) * Infinity;
  if (!(Math.abs(tStat) > q)) return null;
  const gap = level - alpha;
  if (gap * beta <= 0 && gap !== 0) {
    // The line at the centre of the data is on the far side of the level and moving away.
    return null;
  }
  const tauC = gap / beta;
  const at = tbar + tauC;
  if (at - tLast > maxHorizon) return null;
  const [r1, r2] = fiellerRoots(gap, beta, vAlpha, cov, vBeta, q);
  return {
    at,
    low: tbar + r1,
    high: tbar + r2,
    slope: beta,
    slopeStd,
    tStat,
    points: N,
    lag,
    effectivePoints: effective,
  };
}

/**
 * The inverse-prediction (Fieller-type) interval of a line alpha + beta tau reaching alpha + gap
 * (module doc): the roots tau1 <= tau2 of (beta tau - gap)^2 = q^2 (vAlpha + 2 tau cov + tau^2 vBeta).
 * Finite when |beta| / sqrt(vBeta) > q.
 */
export function fiellerRoots(gap: number, beta: number, vAlpha: number, cov: number, vBeta: number, q: number): [number, number] {
  const A2 = beta * beta - q * q * vBeta;
  const A1 = 2 * (-gap * beta - q * q * cov);
  const A0 = gap * gap - q * q * vAlpha;
  const disc = Math.max(0, A1 * A1 - 4 * A2 * A0);
  const r1 = (-A1 - Math.sqrt(disc)) / (2 * A2);
  const r2 = (-A1 + Math.sqrt(disc)) / (2 * A2);
  return [Math.min(r1, r2), Math.max(r1, r2)];
}

/**
 * Weights of points[first .. first + n - 1] (module doc): 1 / max(sd, median / 2)^2, a point
 * without an sd at the median; all 1 when no point has one. Scaled to sum to n.
 */
function pointWeights(points: readonly TrendPoint[], first: number, n: number): Float64Array {
  const w = new Float64Array(n).fill(1);
  const sds: number[] = [];
  for (let i = 0; i < n; i++) {
    const sd = points[first + i]!.sd;
    if (sd !== undefined) sds.push(sd);
  }
  if (sds.length === 0) return w;
  sds.sort((a, b) => a - b);
  const mid = sds.length >> 1;
  const median = sds.length % 2 ? sds[mid]! : 0.5 * (sds[mid - 1]! + sds[mid]!);
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const sd = points[first + i]!.sd;
    const s = Math.max(sd ?? median, median / 2);
    w[i] = 1 / (s * s);
    sum += w[i]!;
  }
  for (let i = 0; i < n; i++) w[i] = (w[i]! * n) / sum;
  return w;
}

/**
 * Student-t quantile with nu (real, >= 1) degrees of freedom from the normal quantile z by the
 * Cornish-Fisher-type expansion of Abramowitz & Stegun, *Handbook of Mathematical Functions*,
 * 1964, 26.7.5 (terms to nu^-4; from memory); within 1 % of the exact value for nu >= 3, and
 * conservative (too large) below.
 */
export function studentQuantile(p: number, nu: number): number {
  const z = normalQuantile(p);
  if (!(nu > 0)) throw new ControlArgumentError(`degrees of freedom must be > 0, got ${nu}`);
  const z2 = z * z;
  const g1 = (z2 + 1) * z / 4;
  const g2 = ((5 * z2 + 16) * z2 + 3) * z / 96;
  const g3 = (((3 * z2 + 19) * z2 + 17) * z2 - 15) * z / 384;
  const g4 = ((((79 * z2 + 776) * z2 + 1482) * z2 - 1920) * z2 - 945) * z / 92160;
  return z + g1 / nu + g2 / nu ** 2 + g3 / nu ** 3 + g4 / nu ** 4;
}

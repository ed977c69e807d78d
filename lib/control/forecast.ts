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
 */
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import { normalQuantile } from "./confidence";

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
}

/**
 * Forecast the time at which the linear trend of `points` (t in seconds, strictly increasing;
 * value finite) reaches `level`, or null when the span or the number of points is too small,
 * the slope is not significant at `confidence`, the trend moves away from the level, or the
 * crossing lies beyond `maxHorizon`. If the trend line already crossed within the data, `at`
 * is at or before the last point.
 */
export function forecastCrossing(
  points: readonly { t: number; value: number }[],
  level: number,
  options: ForecastOptions = {},
): CrossingForecast | null {
  if (!Number.isFinite(level)) throw new NonFiniteInputError("level");
  for (let i = 0; i < points.length; i++) {
    const p = points[i]!;
    if (!Number.isFinite(p.t)) throw new NonFiniteInputError(`points[${i}].t`);
    if (!Number.isFinite(p.value)) throw new NonFiniteInputError(`points[${i}].value`);
    if (i > 0 && !(p.t > points[i - 1]!.t)) throw new ControlArgumentError(`points must have strictly increasing t (index ${i})`);
  }
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

  let tbar = 0;
  let vbar = 0;
  for (let i = first; i < points.length; i++) {
    tbar += points[i]!.t;
    vbar += points[i]!.value;
  }
  tbar /= N;
  vbar /= N;
  let sxx = 0;
  let sxy = 0;
  for (let i = first; i < points.length; i++) {
    const dt = points[i]!.t - tbar;
    sxx += dt * dt;
    sxy += dt * (points[i]!.value - vbar);
  }
  const beta = sxy / sxx;
  const alpha = vbar;
  const x = new Float64Array(N);
  const e = new Float64Array(N);
  for (let i = 0; i < N; i++) {
    const p = points[first + i]!;
    x[i] = p.t - tbar;
    e[i] = p.value - alpha - beta * x[i]!;
  }
  let lag = options.lag;
  if (lag === undefined) {
    const dtMean = span / (N - 1);
    lag = Math.max(Math.floor(4 * (N / 100) ** (2 / 9)), Math.ceil(memory / dtMean));
  }
  if (!Number.isInteger(lag) || lag < 0) throw new ControlArgumentError(`lag must be an integer >= 0, got ${lag}`);
  lag = Math.min(lag, N - 1);
  // Meat S = sum_l w_l sum_t e_t e_{t-l} (x_t x_{t-l}' + x_{t-l} x_t'), x_t = [1, tau_t].
  let s00 = 0;
  let s01 = 0;
  let s11 = 0;
  for (let t = 0; t < N; t++) {
    const ee = e[t]! * e[t]!;
    s00 += ee;
    s01 += ee * x[t]!;
    s11 += ee * x[t]! * x[t]!;
  }
  for (let l = 1; l <= lag; l++) {
    const w = 1 - l / (lag + 1);
    let a00 = 0;
    let a01 = 0;
    let a11 = 0;
    for (let t = l; t < N; t++) {
      const ee = e[t]! * e[t - l]!;
      a00 += 2 * ee;
      a01 += ee * (x[t]! + x[t - l]!);
      a11 += 2 * ee * x[t]! * x[t - l]!;
    }
    s00 += w * a00;
    s01 += w * a01;
    s11 += w * a11;
  }
  // Bread (X'X)^-1 = diag(1/N, 1/sxx) because tau is centred; small-sample factor N/(N-2).
  const f = N / (N - 2);
  const vAlpha = (f * s00) / (N * N);
  const cov = (f * s01) / (N * sxx);
  const vBeta = (f * s11) / (sxx * sxx);
  const slopeStd = Math.sqrt(Math.max(vBeta, 0));
  const q = normalQuantile(0.5 + conf / 2);
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
  const A2 = beta * beta - q * q * vBeta;
  const A1 = 2 * (-gap * beta - q * q * cov);
  const A0 = gap * gap - q * q * vAlpha;
  const disc = Math.max(0, A1 * A1 - 4 * A2 * A0);
  const r1 = (-A1 - Math.sqrt(disc)) / (2 * A2);
  const r2 = (-A1 + Math.sqrt(disc)) / (2 * A2);
  return {
    at,
    low: tbar + Math.min(r1, r2),
    high: tbar + Math.max(r1, r2),
    slope: beta,
    slopeStd,
    tStat,
    points: N,
    lag,
  };
}

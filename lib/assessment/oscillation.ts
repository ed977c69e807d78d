/**
 * Oscillation detection on the control error.
 *
 * 1. Regularity of the autocorrelation's zero crossings: Thornhill, Huang & Zhang, "Detection
 *    of multiple oscillations in control loops", J. Process Control 13 (2003). The periods
 *    between alternate zero crossings of the ACF give the mean period Tp and its spread σ; the
 *    oscillation is regular when r = Tp / (3 σ) > 1. The ACF is used, not the signal, because
 *    white noise only touches lag 0.
 * 2. Persistence: the ACF at the first and second period must stay high (a damped resonance of a
 *    well-tuned loop in noise decays within a cycle; an oscillation does not). This follows the
 *    ACF decay test of Miao & Seborg (1999, IEEE CCA; from memory: decay ratio of the ACF above
 *    0.5 means excessively oscillatory); thresholds below are ours.
 * 3. Load-disturbance count: Hägglund, "A control-loop performance monitor", Control Eng.
 *    Practice 3(11) (1995). IAE between successive zero crossings of the error against
 *    IAE_lim = 2 a / ωu, with a = 1 % of span and ωu = 2π/Ti when the ultimate period is
 *    unknown (as Hägglund proposes); more than n_lim = 10 such events per supervision time
 *    T_sup = 50 Tu means an oscillating loop (a, n_lim and T_sup as published, from memory).
 */
import { autocorrelation } from "./signal";

export interface OscillationResult {
  detected: boolean;
  periodS: number | null;
  regularity: number | null;
  /** Amplitude of the oscillating part, in the signal's units. */
  amplitude: number | null;
  /** ACF (bias-corrected) at one and at two periods. */
  acfAtPeriod: number | null;
  acfAtTwoPeriods: number | null;
  /** Per-period ratio of ACF peaks over up to four periods (about 1 when sustained, the mode's decay ratio when damped). */
  persistence: number | null;
  /** Number of ACF zero crossings used. */
  crossings: number;
  evidence: string[];
}

/** Zero crossings wanted (Thornhill et al. use the first ten or so). */
const MAX_CROSSINGS = 11;
/** Fewest crossings to call an oscillation (three period estimates). */
const MIN_CROSSINGS = 5;
/** Bias-corrected ACF at one period must exceed this (and 4/√N), and keep half of it at two. */
const MIN_ACF_AT_PERIOD = 0.2;
const MIN_PERSISTENCE = 0.5;

/**
 * Zero crossings of the ACF with a hysteresis of `band`: a crossing counts once the ACF has gone
 * beyond ±band on the other side, and is placed at the last sign change before that (so jitter
 * of a weak ACF around zero does not add spurious crossings).
 */
function crossingsOf(r: Float64Array, max: number, band: number): number[] {
  const out: number[] = [];
  let state = 1;
  let last = -1;
  for (let k = 1; k < r.length && out.length < max; k++) {
    const a = r[k - 1]!;
    const b = r[k]!;
    if ((a > 0 && b <= 0) || (a < 0 && b >= 0)) last = k - 1 + a / (a - b);
    if ((state > 0 && b < -band) || (state < 0 && b > band)) {
      state = -state;
      if (last >= 0) out.push(last);
    }
  }
  return out;
}

/** Bias-corrected ACF value at a fractional lag (linear interpolation). */
function acfAt(r: Float64Array, lag: number, n: number): number {
  const k = Math.floor(lag);
  if (k + 1 >= r.length) return NaN;
  const f = lag - k;
  const v = r[k]! * (1 - f) + r[k + 1]! * f;
  return (v * n) / Math.max(1, n - lag);
}

/**
 * Thornhill regularity and persistence on x (sampled every T s; mean removed inside).
 * `maxPeriodS` bounds the periods looked for (default: a fifth of the span).
 */
export function detectOscillation(x: Float64Array, T: number, options: { maxPeriodS?: number; acf?: Float64Array } = {}): OscillationResult {
  const n = x.length;
  const none = (why: string, crossings = 0, regularity: number | null = null): OscillationResult => ({
    detected: false,
    periodS: null,
    regularity,
    amplitude: null,
    acfAtPeriod: null,
    acfAtTwoPeriods: null,
    persistence: null,
    crossings,
    evidence: [why],
  });
  if (n < 20) return none("too few samples for the autocorrelation test");
  const maxPeriod = Math.min(options.maxPeriodS ?? Infinity, (n * T) / 6) / T;
  // Lags up to 60 % of the data: ten crossings of periods up to a sixth of the span.
  const maxLag = Math.min(n - 1, Math.ceil(maxPeriod * 5.5) + 2, Math.floor(n * 0.6));
  const r = options.acf && options.acf.length >= maxLag + 1 ? options.acf : autocorrelation(x, maxLag);
  if (r[0] === 0) return none("the signal is constant");
  const c = crossingsOf(r, MAX_CROSSINGS, Math.min(0.1, 2 / Math.sqrt(n)));
  if (c.length < 3) return none(`the error's autocorrelation crosses zero only ${c.length} times within the lags examined: no regular oscillation (Thornhill et al. 2003)`, c.length);
  const periods: number[] = [];
  for (let i = 0; i + 2 < c.length; i++) periods.push(c[i + 2]! - c[i]!);
  const tp = periods.reduce((s, v) => s + v, 0) / periods.length;
  const sd = Math.sqrt(periods.reduce((s, v) => s + (v - tp) ** 2, 0) / Math.max(1, periods.length - 1));
  // Thornhill's regularity needs at least three period estimates; with fewer crossings the
  // period is still reported (a ringing mode) but never called an oscillation.
  const regularity = c.length < MIN_CROSSINGS ? 0 : sd > 0 ? tp / (3 * sd) : Infinity;
  const periodS = tp * T;
  if (tp > maxPeriod) return none(`the dominant autocorrelation period (${periodS.toFixed(1)} s) is too long for the span of data`, c.length, finiteOrNull(regularity));
  const a1 = acfAt(r, tp, n);
  const a2 = acfAt(r, 2 * tp, n);
  // Per-period decay of the ACF peaks over up to four periods (1 for a sustained oscillation).
  let K = 4;
  while (K > 2 && !(K * tp < r.length - 1)) K--;
  const aK = acfAt(r, K * tp, n);
  const persistence = Number.isFinite(aK) && a1 > 0 ? Math.sign(aK) * Math.pow(Math.abs(aK) / a1, 1 / (K - 1)) : null;
  const sig = Math.max(MIN_ACF_AT_PERIOD, 4 / Math.sqrt(n));
  const regular = regularity > 1;
  const persistent = Number.isFinite(a1) && Number.isFinite(a2) && a1 > sig && a2 > MIN_PERSISTENCE * a1;
  void aK;
  let v0 = 0;
  let m = 0;
  for (let i = 0; i < n; i++) m += x[i]!;
  m /= n;
  for (let i = 0; i < n; i++) v0 += (x[i]! - m) ** 2;
  v0 /= n;
  // Periodic part's variance ≈ autocovariance at one period; amplitude of a sine = √(2 var).
  const amplitude = a1 > 0 ? Math.sqrt(2 * a1 * v0) : 0;
  const evidence = [
    c.length < MIN_CROSSINGS
      ? `the autocorrelation crosses zero only ${c.length} times (period about ${periodS.toFixed(1)} s): a decaying mode, not a regular oscillation (Thornhill et al. 2003)`
      : `autocorrelation zero crossings give a period of ${periodS.toFixed(1)} s with regularity r = ${fmt(regularity)} (${regular ? "regular" : "irregular"}: r > 1 is regular, Thornhill et al. 2003)`,
    `autocorrelation at one and two periods: ${fmt(a1)} and ${fmt(a2)}, per-period decay ${fmt(persistence)} (${persistent ? "persistent" : "decaying or weak"})`,
  ];
  return {
    detected: regular && persistent,
    periodS,
    regularity: c.length < MIN_CROSSINGS ? null : finiteOrNull(regularity),
    amplitude,
    acfAtPeriod: finiteOrNull(a1),
    acfAtTwoPeriods: finiteOrNull(a2),
    persistence,
    crossings: c.length,
    evidence,
  };
}

function finiteOrNull(v: number): number | null {
  return Number.isFinite(v) ? v : v === Infinity ? 1e6 : null;
}

export function fmt(v: number | null | undefined, digits = 2): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return "n/a";
  return Math.abs(v) >= 1e4 ? v.toExponential(2) : v.toFixed(digits);
}

export interface LoadDisturbanceCount {
  count: number;
  supervisionS: number;
  iaeLimit: number;
  /** Events per supervision time. */
  rate: number;
  oscillating: boolean;
}

/**
 * Hägglund (1995): IAE between zero crossings of the error e (in % of span) against
 * IAE_lim = 2 a / ωu, a = 1 % of span; `ultimateS` is the ultimate period or, as Hägglund
 * suggests when it is unknown, the integral time.
 */
export function countLoadDisturbances(e: Float64Array, T: number, ultimateS: number, include?: Uint8Array): LoadDisturbanceCount {
  const a = 1;
  const wu = (2 * Math.PI) / ultimateS;
  const iaeLimit = (2 * a) / wu;
  let m = 0;
  let k = 0;
  for (let i = 0; i < e.length; i++) if (!include || include[i]) {
    m += e[i]!;
    k++;
  }
  m = k ? m / k : 0;
  let count = 0;
  let iae = 0;
  let sign = 0;
  for (let i = 0; i < e.length; i++) {
    if (include && !include[i]) {
      iae = 0;
      sign = 0;
      continue;
    }
    const v = e[i]! - m;
    const s = v > 0 ? 1 : v < 0 ? -1 : 0;
    if (s !== 0 && s !== sign) {
      if (iae > iaeLimit) count++;
      iae = 0;
      sign = s;
    }
    iae += Math.abs(v) * T;
  }
  if (iae > iaeLimit) count++;
  const supervisionS = 50 * ultimateS;
  const spanS = e.length * T;
  const rate = spanS > 0 ? (count * supervisionS) / spanS : 0;
  return { count, supervisionS, iaeLimit, rate, oscillating: rate > 10 };
}

/**
 * Whether x[from, to) oscillates at about `periodSamples` (±10 %): bias-corrected ACF above 0.3
 * near one period and below -0.2 near half a period (used on manual stretches).
 */
export function oscillatesAt(x: Float64Array, from: number, to: number, periodSamples: number): boolean {
  const n = to - from;
  if (n < 3 * periodSamples || periodSamples < 4) return false;
  const seg = x.subarray(from, to);
  const r = autocorrelation(seg, Math.min(n - 1, Math.ceil(periodSamples * 1.1) + 1));
  let best = -Infinity;
  for (let lag = Math.floor(periodSamples * 0.9); lag <= Math.ceil(periodSamples * 1.1) && lag < r.length; lag++) best = Math.max(best, acfAt(r, lag, n));
  const half = acfAt(r, periodSamples / 2, n);
  return best > 0.3 && half < -0.2;
}

/**
 * The loop's response to its own set-point moves, read from routine data: the one part of a
 * closed-loop record where the loop is excited from outside (Ljung, System Identification, 2nd
 * ed., 1999, sec. 13.4: a plant under feedback is identifiable only with an external signal such
 * as the set point). Set-point steps of an operator and a cascade master's wandering set point
 * both serve; loads and noise are independent of them and average out.
 *
 * Method: the closed-loop step response r -> y as a finite impulse response of the set point's
 * increments to PV's increments, fitted by least squares over good closed-loop stretches (block
 * means, so the FIR spans the response with few coefficients; the Wiener–Hopf normal equations,
 * common practice in correlation analysis, e.g. Ljung 1999 sec. 6.1). Its running sum is the
 * step response s(t) (1 = the move completed, with integral action). Read from it, as in the
 * set-point-response assessment of Swanda & Seborg ("Controller performance assessment based on
 * setpoint response data", Proc. American Control Conference 1999; from memory), who judge a PI
 * loop by its settling time and IAE made dimensionless by the apparent dead time:
 * - the apparent dead time θ̂: at the finest block length at which the step response is
 *   significant (three standard errors, two lags in a row), the reaction-curve tangent at its
 *   steepest significant point (Ziegler & Nichols 1942, common practice), never later than the
 *   first significant lag; the delay of the closed loop r -> y is the loop's transport delay (the
 *   controller adds none but its period), but a weak, slowly rising response is found late, so θ̂
 *   can over-state the dead time of a loop that answers weakly (which lowers the ratio below);
 * - t63: the time to 63 % of the move (null when the fitted horizon ends first);
 * - the dimensionless response time t63/θ̂.
 * Standard errors: least-squares covariance inflated by the residuals' autocorrelation (the
 * effective-sample-size factor 1 + 2 Σ ρ_k, Bartlett; common practice).
 */

import { invert } from "@/lib/control/linalg";
import { decimate } from "./closed-loop";
import { overshootLine } from "./setpoint-overshoot";

/** FIR length, coefficients (ours: spans the response in 48 blocks). */
const LAGS = 48;
/** Standard errors a response value must exceed to count (ours). */
const Z_ONSET = 3;

export interface SetPointResponse {
  /** Apparent dead time θ̂, s (reaction-curve tangent, never later than the first significant lag). */
  deadTimeS: number;
  /** Time to 63 % of the move, s; null when not reached within the horizon. */
  t63S: number | null;
  /** The horizon of the fitted response, s (t63 is at least this when null). */
  horizonS: number;
  /** t63 / θ̂, or horizon / θ̂ as a lower bound when t63 is null. */
  ratio: number;
  /** True when `ratio` is only a lower bound. */
  lowerBound: boolean;
  /**
   * With a lower bound: the step response at the horizon's end is significantly short of 63 % of
   * the move (its upper bound at Z_ONSET standard errors below 0.63), so the move was shown to be
   * slow, not merely too noisy to read; true when t63 was reached.
   */
  shortOfMove: boolean;
  /** Block length of the fine fit, s (the resolution of θ̂). */
  resolutionS: number;
  /** Largest |s| / standard error over the response: how clearly the data show it. */
  strength: number;
  /**
   * Overshoot of the step response after t63: its peak above 1 (the completed move), as a share of
   * the move, with the standard error of the step response at the peak; null when t63 was not
   * reached within the horizon or the peak is the horizon's last value (still rising).
   */
  overshoot: number | null;
  overshootSe: number | null;
}

interface Fir {
  /** Impulse response (per block) and its running sum, the step response, with standard errors. */
  h: Float64Array;
  hSe: Float64Array;
  step: Float64Array;
  se: Float64Array;
}

/** FIR of Δr -> Δy over the stretches at block length g; the running sum and its standard errors. */
function fitFir(r: Float64Array, y: Float64Array, stretches: readonly [number, number][], g: number): Fir | null {
  const n = LAGS;
  const XtX = new Float64Array(n * n);
  const Xty = new Float64Array(n);
  const segs: { dr: Float64Array; dy: Float64Array }[] = [];
  let rows = 0;
  // Wiener–Hopf normal equations from the sample autocovariance of Δr (Toeplitz) and the cross
  // covariance Δr -> Δy, pooled over the stretches: O(rows · lags) (common practice).
  const rr = new Float64Array(n);
  for (const [s, e] of stretches) {
    const rb = decimate(r.subarray(s, e), g);
    const yb = decimate(y.subarray(s, e), g);
    if (rb.length < n + 10) continue;
    const dr = new Float64Array(rb.length - 1);
    const dy = new Float64Array(rb.length - 1);
    for (let i = 1; i < rb.length; i++) {
      // below 1e-9 % of span a difference is rounding, not a move
      const d = rb[i]! - rb[i - 1]!;
      dr[i - 1] = Math.abs(d) > 1e-9 ? d : 0;
      dy[i - 1] = yb[i]! - yb[i - 1]!;
    }
    segs.push({ dr, dy });
    rows += dr.length - (n - 1);
    for (let t = 0; t < dr.length; t++) {
      const xt = dr[t]!;
      if (xt === 0) continue;
      for (let k = 0; k < n && t + k < dr.length; k++) {
        rr[k] = rr[k]! + xt * dr[t + k]!;
        Xty[k] = Xty[k]! + xt * dy[t + k]!;
      }
    }
  }
  if (rows < 4 * n) return null;
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) XtX[i * n + j] = rr[Math.abs(i - j)]!;
  let trace = 0;
  for (let i = 0; i < n; i++) trace += XtX[i * n + i]!;
  if (!(trace > 0)) return null;
  for (let i = 0; i < n; i++) {
    XtX[i * n + i] = XtX[i * n + i]! + 1e-6 * (trace / n);
  }
  const inv = invert(XtX, n);
  if (!inv) return null;
  const h = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += inv[i * n + j]! * Xty[j]!;
    h[i] = s;
  }
  // Residuals: variance and autocorrelation (pooled over the stretches) for the inflation factor.
  const maxLag = 10;
  const acc = new Float64Array(maxLag + 1);
  for (const { dr, dy } of segs) {
    // Prediction from the moves only (most set points move rarely): O(moves · lags).
    const pred = new Float64Array(dr.length);
    for (let t = 0; t < dr.length; t++) {
      const xt = dr[t]!;
      if (xt !== 0) for (let i = 0; i < n && t + i < dr.length; i++) pred[t + i] = pred[t + i]! + h[i]! * xt;
    }
    const res = new Float64Array(dr.length - (n - 1));
    for (let t = n - 1; t < dr.length; t++) res[t - (n - 1)] = dy[t]! - pred[t]!;
    for (let k = 0; k <= maxLag; k++) for (let t = k; t < res.length; t++) acc[k] = acc[k]! + res[t]! * res[t - k]!;
  }
  const s2 = acc[0]! / Math.max(1, rows - n);
  let inflate = 1;
  // residuals all zero (a response the FIR holds exactly): no autocorrelation to inflate by
  if (acc[0]! > 0) for (let k = 1; k <= maxLag; k++) inflate += 2 * (acc[k]! / acc[0]!);
  inflate = Math.max(1, inflate);
  const step = new Float64Array(n);
  const se = new Float64Array(n);
  const hSe = new Float64Array(n);
  for (let k = 0; k < n; k++) hSe[k] = Math.sqrt(Math.max(0, inv[k * n + k]! * s2 * inflate));
  let run = 0;
  for (let k = 0; k < n; k++) {
    run += h[k]!;
    step[k] = run;
    // var(sum_{i<=k} h_i) = 1' Cov 1 over the leading (k+1)×(k+1) block.
    let v = 0;
    for (let i = 0; i <= k; i++) for (let j = 0; j <= k; j++) v += inv[i * n + j]!;
    se[k] = Math.sqrt(Math.max(0, v * s2 * inflate));
  }
  return { h, hSe, step, se };
}

/**
 * The reaction-curve tangent (Ziegler & Nichols 1942, common practice): the line through the
 * steepest significant point of the step response meets the baseline at the apparent dead time,
 * in blocks; null without a significant slope up to lag `upTo`.
 */
function tangentOnset(f: Fir, upTo: number): number | null {
  let best = -1;
  for (let k = 0; k <= Math.min(upTo, f.h.length - 1); k++) if (f.h[k]! > Z_ONSET * f.hSe[k]! && (best < 0 || f.h[k]! > f.h[best]!)) best = k;
  return best < 0 ? null : best - f.step[best]! / f.h[best]!;
}

function onsetIndex(f: Fir): number | null {
  for (let k = 0; k + 1 < f.step.length; k++) if (f.step[k]! > Z_ONSET * f.se[k]! && f.step[k + 1]! > Z_ONSET * f.se[k + 1]!) return k;
  return null;
}

function t63Index(f: Fir): number | null {
  for (let k = 0; k < f.step.length; k++) if (f.step[k]! >= 0.63 && f.step[k]! > Z_ONSET * f.se[k]!) return k;
  return null;
}

export interface SetPointResponseInput {
  /** PV and set point, % of span (the set point computed from its own column, so a constant one stays exactly constant). */
  pv: Float64Array;
  sp: Float64Array;
  /** Good closed-loop stretches [start, end) (the set point may move). */
  stretches: readonly [number, number][];
  T: number;
  /** The longest response looked for, s (a coarse fit spans it). */
  horizonS: number;
}

/**
 * The loop's set-point response (see the file's comment); null when the set point does not move
 * enough for a significant response (no moves, or moves lost in the loads).
 */
export function setPointResponse(x: SetPointResponseInput): SetPointResponse | null {
  const { T } = x;
  const sp = x.sp;
  let moves = false;
  for (const [s, e] of x.stretches) for (let i = s + 1; i < e && !moves; i++) moves = Math.abs(sp[i]! - sp[i - 1]!) > 1e-9;
  if (!moves) return null;
  // Block lengths 1, 2, 4, ... samples: the apparent dead time from the finest at which the
  // response is significant, t63 from the first at which the fitted horizon reaches it.
  let deadTimeS: number | null = null;
  let resolutionS = T;
  let t63S: number | null = null;
  let horizon = 0;
  let strength = 0;
  let last: Fir | null = null;
  let peak: { overshoot: number; se: number } | null = null;
  for (let g = 1; ; g *= 2) {
    const fir = fitFir(sp, x.pv, x.stretches, g);
    if (!fir) break;
    last = fir;
    horizon = LAGS * g * T;
    for (let k = 0; k < LAGS; k++) if (fir.se[k]! > 0) strength = Math.max(strength, Math.abs(fir.step[k]!) / fir.se[k]!);
    if (deadTimeS === null) {
      const on = onsetIndex(fir);
      // Lag k of block increments spans k - 1 to k + 1 blocks: its middle is the apparent delay.
      // A weak, slowly rising response is significant late: the tangent at its steepest point
      // reads the start of the rise, never later than the significance test.
      if (on !== null) {
        const k63 = t63Index(fir);
        const tan = tangentOnset(fir, k63 ?? LAGS - 1);
        deadTimeS = Math.max(0.5, Math.min(on, tan ?? on)) * g * T;
        resolutionS = g * T;
      }
    }
    const k63 = deadTimeS !== null ? t63Index(fir) : null;
    if (k63 !== null) {
      t63S = (k63 + 0.5) * g * T;
      peak = peakAfter(fir, k63);
      break;
    }
    if (horizon >= x.horizonS) break;
  }
  if (deadTimeS === null || horizon === 0 || last === null) return null;
  const end = last.step.length - 1;
  const shortOfMove = t63S !== null || last.step[end]! + Z_ONSET * last.se[end]! < 0.63;
  return {
    deadTimeS,
    t63S,
    horizonS: horizon,
    ratio: (t63S ?? horizon) / deadTimeS,
    lowerBound: t63S === null,
    shortOfMove,
    resolutionS,
    strength,
    overshoot: peak?.overshoot ?? null,
    overshootSe: peak?.se ?? null,
  };
}

/** The step response's peak at or after lag k63, less 1, and its standard error; null when the peak is the last lag. */
function peakAfter(f: Fir, k63: number): { overshoot: number; se: number } | null {
  let k = k63;
  for (let i = k63 + 1; i < f.step.length; i++) if (f.step[i]! > f.step[k]!) k = i;
  return k === f.step.length - 1 ? null : { overshoot: f.step[k]! - 1, se: f.se[k]! };
}

/** Strength (largest |s| / standard error) the response needs before it is read at all (ours). */
const MIN_STRENGTH = 4;
/**
 * t63 / θ̂ at or above which the set point is followed sluggishly, and below which it is followed
 * as fast as a good tuning does. SIMC (Skogestad, J. Process Control 13, 2003; from memory) aims
 * at a closed-loop time constant τc of one to a few dead times, so a set-point move is 63 % done
 * after about θ + τc = 2–4 θ. The limits are ours, from the study in docs/assessment-rounds.md (study
 * bases 101–110, t63/θ̂ with the tangent's dead time: healthy loops 1.0–8.8 and level loops
 * 1.8–13; sluggish ones 7.4 and then 10.4 and up, level loops 4.3 and up).
 */
const FAST_RATIO = 4;
const FAST_RATIO_LEVEL = 3;
const SLOW_RATIO = 10;
const SLOW_RATIO_LEVEL = 15;

export interface SetPointSigns {
  slow: boolean;
  fast: boolean;
  /** An evidence line for the finding, or null when the response is not read. */
  line: string | null;
  /** The evidence line of an aggressive overshoot (setpoint-overshoot.ts), null without one. */
  overshoot?: string | null;
}

const f0 = (v: number) => (v >= 10 ? v.toFixed(0) : v.toPrecision(2));

/** The sluggish and fast signs of a set-point response (null or too weak: neither). */
export function setPointSigns(r: SetPointResponse | null, integrating: boolean): SetPointSigns {
  if (!r || r.strength < MIN_STRENGTH) return { slow: false, fast: false, line: null };
  // A move not completed within the horizon counts only when the data show it short of 63 %
  // (a response too noisy to read is no evidence of slowness).
  const slow = r.ratio >= (integrating ? SLOW_RATIO_LEVEL : SLOW_RATIO) && r.shortOfMove;
  const fast = !r.lowerBound && r.ratio < (integrating ? FAST_RATIO_LEVEL : FAST_RATIO);
  const reached = r.t63S !== null ? `63 % of a move after ${f0(r.t63S)} s` : `less than 63 % of a move within ${f0(r.horizonS)} s`;
  const what = slow ? "followed slowly" : fast ? "followed about as fast as a good tuning does" : r.shortOfMove ? "followed" : "not read as slow (the response at the end of the fitted horizon is too uncertain to say the move was unfinished)";
  const line = `the set point's moves are ${what}: ${reached}, ${r.lowerBound ? "more than " : ""}${f0(r.ratio)}× the apparent dead time of about ${f0(r.deadTimeS)} s (step response from the set-point moves in the data; response time against dead time as in Swanda & Seborg 1999)`;
  return { slow, fast, line, overshoot: slow ? null : overshootLine(r, Z_ONSET) };
}

/**
 * The time scale the data span is judged against: without a configured dead time the integral
 * time, capped at ten apparent dead times when the set-point response gives one (as a configured
 * dead time caps it in index.ts: a sluggish loop's long Ti says little about how fast the process
 * is). Pushes the caution that says the dead time is an estimate.
 */
export function spanTimeScale(timeScaleS: number, configuredDeadS: number | null, read: SetPointResponse | null, cautions: string[]): number {
  if (!read || (configuredDeadS !== null && configuredDeadS > 0)) return timeScaleS;
  cautions.push(
    `Apparent dead time of about ${f0(read.deadTimeS)} s read from the loop's response to its set-point moves (an estimate: a slowly rising response is found late, and the resolution is ${f0(read.resolutionS)} s); the Harris index still needs a configured or step-test dead time.`,
  );
  return Math.max(read.deadTimeS, Math.min(timeScaleS, 10 * read.deadTimeS));
}

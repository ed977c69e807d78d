/**
 * Valve stiction indicators from routine data of an oscillating loop, two independent tests:
 *
 * 1. Cross-correlation test: Horch, "A simple method for detection of stiction in control
 *    valves", Control Eng. Practice 7 (1999). The cross-correlation of controller output (MV) and
 *    PV over lags within half a period is odd (near zero at lag 0) for a sticking valve and even
 *    (extreme at lag 0) for a linear oscillation. For integrating (level) loops PV increments
 *    replace PV (Horch's extension for integrating processes, from memory). The test cannot tell
 *    when integral action dominates the controller at the oscillation frequency (the controller
 *    alone then shifts MV by ~90°, so every oscillation looks odd); it is withheld there, and
 *    when the oscillation comes from outside.
 * 2. Curve fitting of half-cycles: He, Wang, Pottmann & Qin, "A curve fitting method for
 *    detecting valve stiction in oscillating control loops" (2007; journal from memory: Ind. Eng.
 *    Chem. Res. 46). A sticking valve makes the MV of a self-regulating loop (or the PV of an
 *    integrating one) triangular; a linear oscillation is sinusoidal. Each half-cycle is fitted
 *    by both shapes; SI = MSE_sin / (MSE_sin + MSE_tri); SI <= 0.4 no stiction, >= 0.6
 *    stiction, between undetermined (thresholds as published, from memory).
 *
 * The verdict is "likely" / "unlikely" / "undetermined", never certain: a valve travel test
 * (intrusive, with operations' consent) decides.
 */
import { fmt } from "./oscillation";
import { crossCovariance } from "./signal";
import type { StictionFigures, StictionTests } from "./types";

export interface StictionInput {
  pv: Float64Array;
  mv: Float64Array;
  /** Closed-loop, good samples used (1) or not (0). */
  include: Uint8Array;
  T: number;
  periodS: number | null;
  oscillating: boolean;
  /** True when the cycle is only a ringing mode, not a detected oscillation: the shape must then be clearer. */
  ringingOnly?: boolean;
  integrating: boolean;
  /** Integral time, s, or null without integral action. */
  ti: number | null;
  compressed: boolean;
  outsideOscillation: boolean;
}

export interface StictionResult extends StictionFigures {
  tests: StictionTests;
}

/** ∠C of a PI above this (degrees) at the oscillation frequency: integral action dominates. */
const INTEGRAL_DOMINANT_DEG = 60;

/** Horch: oddness = 1 - |r(0)| / max |r(τ)| over |τ| <= Tp/2 (1: odd, 0: even). */
export function crossCorrelationOddness(u: Float64Array, y: Float64Array, periodSamples: number): number | null {
  const half = Math.max(2, Math.round(periodSamples / 2));
  if (u.length < 4 * half) return null;
  const c = crossCovariance(u, y, half);
  const mid = (c.length - 1) / 2;
  let max = 0;
  for (let k = 0; k < c.length; k++) max = Math.max(max, Math.abs(c[k]!));
  if (!(max > 0)) return null;
  return 1 - Math.abs(c[mid]!) / max;
}

/** He et al. (2007): stiction index from sine and triangle fits of half-cycles of x. */
export function curveFitIndex(x: Float64Array, periodSamples: number): { index: number; halfCycles: number } | null {
  const n = x.length;
  if (periodSamples < 16 || n < 2 * periodSamples) return null;
  // Light smoothing (moving average over a twentieth of the period) against noise.
  const w = Math.max(1, Math.round(periodSamples / 20));
  const s = new Float64Array(n);
  let acc = 0;
  let m = 0;
  for (let i = 0; i < n; i++) m += x[i]!;
  m /= n;
  for (let i = 0; i < n; i++) {
    acc += x[i]! - m;
    if (i >= w) acc -= x[i - w]! - m;
    s[i] = acc / Math.min(i + 1, w);
  }
  // Zero crossings with hysteresis of a quarter of the RMS (centre the smoothing delay).
  let rms = 0;
  for (let i = 0; i < n; i++) rms += s[i]! * s[i]!;
  rms = Math.sqrt(rms / n);
  const hyst = 0.25 * rms;
  const shift = Math.floor((w - 1) / 2);
  const crossings: number[] = [];
  let state = 0;
  for (let i = 0; i < n; i++) {
    const v = s[i]!;
    const next = v > hyst ? 1 : v < -hyst ? -1 : state;
    if (next !== state && state !== 0) {
      // Back-track to the sign change.
      let k = i;
      while (k > 0 && Math.sign(s[k - 1]!) === next) k--;
      crossings.push(Math.max(0, k - shift));
    }
    state = next;
  }
  const halfP = periodSamples / 2;
  let mseSin = 0;
  let mseTri = 0;
  let count = 0;
  for (let c = 0; c + 1 < crossings.length; c++) {
    const a = crossings[c]!;
    const b = crossings[c + 1]!;
    const L = b - a;
    if (L < 0.4 * halfP || L > 1.6 * halfP || L < 4) continue;
    let segMean = 0;
    for (let i = a; i < b; i++) segMean += x[i]!;
    // The half-cycle is measured from the signal's overall mean.
    const seg = new Float64Array(L);
    for (let i = 0; i < L; i++) seg[i] = x[a + i]! - m;
    void segMean;
    mseSin += fitShape(seg, (t) => Math.sin((Math.PI * (t + 0.5)) / L));
    let bestTri = Infinity;
    for (let q = 0.15; q <= 0.851; q += 0.05) {
      const peak = q * L;
      bestTri = Math.min(bestTri, fitShape(seg, (t) => (t + 0.5 <= peak ? (t + 0.5) / peak : (L - t - 0.5) / (L - peak))));
    }
    mseTri += bestTri;
    count++;
  }
  if (count < 3 || !(mseSin + mseTri > 0)) return null;
  return { index: mseSin / (mseSin + mseTri), halfCycles: count };
}

/** Least-squares amplitude of a fixed shape; returns the mean squared residual. */
function fitShape(seg: Float64Array, shape: (t: number) => number): number {
  let sxy = 0;
  let sxx = 0;
  const L = seg.length;
  const f = new Float64Array(L);
  for (let t = 0; t < L; t++) {
    f[t] = shape(t);
    sxy += f[t]! * seg[t]!;
    sxx += f[t]! * f[t]!;
  }
  const A = sxx > 0 ? sxy / sxx : 0;
  let r = 0;
  for (let t = 0; t < L; t++) r += (seg[t]! - A * f[t]!) ** 2;
  return r / L;
}

/** Longest run of included samples, as [start, end). */
function longestRun(include: Uint8Array): [number, number] {
  let best: [number, number] = [0, 0];
  let start = -1;
  for (let i = 0; i <= include.length; i++) {
    if (i < include.length && include[i]) {
      if (start < 0) start = i;
    } else if (start >= 0) {
      if (i - start > best[1] - best[0]) best = [start, i];
      start = -1;
    }
  }
  return best;
}

export function assessStiction(input: StictionInput): StictionResult {
  const tests: StictionTests = {
    crossCorrelation: { applicable: false, oddness: null, signal: input.integrating ? "pv-increments" : "pv", note: "" },
    curveFit: { applicable: false, index: null, signal: input.integrating ? "pv" : "mv", note: "" },
  };
  const evidence: string[] = [];
  if (!input.oscillating || input.periodS === null) {
    tests.crossCorrelation.note = tests.curveFit.note = "no oscillation";
    return { verdict: "unlikely", evidence: ["no limit cycle in the data, so no stick-slip cycle seen (a valve can still stick without cycling; a valve travel test decides)"], tests };
  }
  if (input.compressed) {
    tests.crossCorrelation.note = tests.curveFit.note = "withheld: compressed data";
    return { verdict: "undetermined", evidence: ["withheld: the export looks compressed or quantised, which fakes stick-slip shapes"], tests };
  }
  if (input.outsideOscillation) {
    tests.crossCorrelation.note = tests.curveFit.note = "withheld: oscillation from outside";
    return { verdict: "unlikely", evidence: ["the oscillation persists while the loop is in manual, so it comes from outside the loop, not from its valve"], tests };
  }
  const P = input.periodS / input.T;
  const [s, e] = longestRun(input.include);
  const u = input.mv.subarray(s, e);
  let y: Float64Array = input.pv.subarray(s, e);
  if (input.integrating) {
    const d = new Float64Array(Math.max(0, y.length - 1));
    for (let i = 1; i < y.length; i++) d[i - 1] = y[i]! - y[i - 1]!;
    y = d;
  }
  // Horch, with the integral-dominance guard.
  const w = (2 * Math.PI) / input.periodS;
  const phiC = input.ti === null ? 0 : (Math.atan(1 / (w * input.ti)) * 180) / Math.PI;
  let horch: "odd" | "even" | "inconclusive" | "withheld" = "withheld";
  if (phiC > INTEGRAL_DOMINANT_DEG) {
    tests.crossCorrelation.note = `withheld: integral action dominates at the oscillation period (controller phase ${phiC.toFixed(0)}°)`;
    evidence.push(`cross-correlation test withheld: at the oscillation period the integral action alone shifts MV by ${phiC.toFixed(0)}° (Horch 1999 fails there)`);
  } else {
    const odd = crossCorrelationOddness(u.subarray(0, y.length), y, P);
    tests.crossCorrelation.applicable = odd !== null;
    tests.crossCorrelation.oddness = odd;
    if (odd === null) tests.crossCorrelation.note = "too few cycles";
    else {
      horch = odd > 0.5 ? "odd" : odd < 0.2 ? "even" : "inconclusive";
      tests.crossCorrelation.note = horch;
      evidence.push(`MV–${input.integrating ? "ΔPV" : "PV"} cross-correlation is ${horch} (oddness ${fmt(odd)}; odd points to stiction, even to a linear cause: Horch 1999)`);
    }
  }
  // He et al. curve fit.
  const fitSignal = input.integrating ? input.pv.subarray(s, e) : u;
  const fit = curveFitIndex(fitSignal, P);
  let shape: "triangular" | "sinusoidal" | "inconclusive" | "withheld" = "withheld";
  if (fit) {
    tests.curveFit.applicable = true;
    tests.curveFit.index = fit.index;
    // He et al.'s 0.6 on an oscillation; 0.65 on a mere ringing mode, whose noisy half-cycles
    // of a sluggish or aggressive loop reach about 0.6 without any stiction (seen in simulation).
    const triangular = input.ringingOnly ? 0.65 : 0.6;
    shape = fit.index >= triangular ? "triangular" : fit.index <= 0.4 ? "sinusoidal" : "inconclusive";
    tests.curveFit.note = shape;
    evidence.push(`${input.integrating ? "PV" : "MV"} half-cycles are ${shape} (stiction index ${fmt(fit.index)} over ${fit.halfCycles} half-cycles; >= 0.6 triangular, <= 0.4 sinusoidal: He et al. 2007)`);
  } else {
    tests.curveFit.note = "too few clean half-cycles";
    evidence.push("curve-fit test withheld: too few clean half-cycles");
  }
  // The curve fit leads: the cross-correlation of MV and PV is fixed by the controller's own
  // phase at the cycle's period (MV = C(SP - PV)), so it mostly tells whether integral action
  // dominates there, which is Horch's known limit; it confirms or tempers, it does not veto.
  let verdict: StictionFigures["verdict"] = "undetermined";
  if (shape === "triangular") verdict = "likely";
  else if (shape === "sinusoidal") verdict = "unlikely";
  else if (horch === "even") verdict = "unlikely";
  if (verdict === "likely") {
    evidence.unshift("likely valve stiction: the cycles have the shape of a stick-slip cycle");
    if (horch === "even") evidence.push("the cross-correlation test reads even, as it does whenever proportional action dominates at the cycle's period; the shape test is the stronger sign here");
  }
  return { verdict, evidence, tests };
}

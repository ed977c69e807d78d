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
 *    stiction, between undetermined (thresholds as published, from memory). Ours: half-cycles
 *    are found on the signal less its local mean over three periods (drifts no longer decide the
 *    zero crossings), and triangular needs the per-half-cycle indices above 0.5 by t >= 3.
 * 3. Stiction model fit (Jelali 2008; stiction-fit.ts), the second independent test; on integrating
 *    (level) loops also on coarser blocks, where a level's ramps between slips outgrow its
 *    measurement noise (Horch 2000's argument for integrating processes; stiction-integrating.ts);
 *    on a level loop whose error does not ring, that coarse fit alone, over a twelfth of the
 *    integral time (quietLevelStiction).
 * 4. When the whole record's error neither oscillates nor rings but the set point moves, the
 *    error's autocorrelation pooled over the constant-set-point stretches (stiction-setpoint.ts):
 *    set-point steps' transients can hide a stick-slip cycle; when it rings there, the tests
 *    above are asked at that period (ringsBetweenMoves).
 *
 * The verdict is "likely" / "unlikely" / "undetermined", never certain: a valve travel test
 * (intrusive, with operations' consent) decides.
 */
import { fmt } from "./oscillation";
import { findHalfCycles, fitShape, sineShape } from "./half-cycles";
import { crossCovariance } from "./signal";
import { fitStictionModel, readStictionFit, type StictionFitReading } from "./stiction-fit";
import { COARSE_BLOCKS_PER_CYCLE, coarseLevelFit, type CoarseLevelFit } from "./stiction-integrating";
import { fewCyclesWait } from "./stiction-few-cycles";
import { setPointRinging } from "./stiction-setpoint";
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
  /** Output limits, % (the model fit is withheld when the output rests at one). */
  mvLimits: [number, number];
  /** Control error and set point (engineering units) and the set point's tolerance: ringing between set-point moves (stiction-setpoint.ts). */
  setPoint?: { e: Float64Array; sp: Float64Array; tol: number };
}

export interface StictionResult extends StictionFigures {
  tests: StictionTests;
  /**
   * Data time still needed, s, when the half-cycles lean to a stick-slip shape that too few
   * cycles can confirm and the record is too short for the model fit (stiction-few-cycles.ts).
   */
  needsS?: number;
}

/** Share of the stretch with the output at a limit above which the model fit is withheld (ours). */
const MODEL_LIMIT_SHARE = 0.02;

function modelFitTest(mv: Float64Array, pv: Float64Array, P: number, [lo, hi]: [number, number], integrating: boolean): { figures: StictionTests["modelFit"]; line: string | null; reading: StictionFitReading | "withheld" } {
  const band = 0.005 * (hi - lo);
  let atLimit = 0;
  for (let i = 0; i < mv.length; i++) if (mv[i]! <= lo + band || mv[i]! >= hi - band) atLimit++;
  const figures: StictionTests["modelFit"] = { applicable: false, residualRatio: null, bandPct: null, jumpPct: null, note: "" };
  if (atLimit > MODEL_LIMIT_SHARE * mv.length) {
    figures.note = "withheld: the output rests at a limit";
    return { figures, line: "model-fit test withheld: the output rests at a limit, which also holds the valve still", reading: "withheld" };
  }
  const fit = fitStictionModel(mv, pv, P);
  if (!fit) {
    figures.note = "too few cycles";
    return { figures, line: null, reading: "withheld" };
  }
  if (integrating && readStictionFit(fit) !== "clear") {
    const coarse = coarseLevelFit(mv, pv, P);
    if (coarse?.clear) return coarseFitTest(coarse);
  }
  figures.applicable = true;
  figures.residualRatio = fit.residualRatio;
  figures.bandPct = fit.bandPct;
  figures.jumpPct = fit.jumpPct;
  const gain = 1 - fit.residualRatio;
  const reading = readStictionFit(fit);
  figures.note = { clear: "stick-slip explains PV", none: "no gain over a linear valve", slight: "slight gain", implausible: "the best valve is not a stick-slip cycle's (band at the largest searched, or seldom slips)" }[reading];
  const source = "stiction model fit: Jelali 2008, model of Choudhury et al. 2005";
  return {
    figures,
    reading,
    line:
      reading === "none"
        ? `a sticking valve explains PV no better than a linear valve beyond chance (${(100 * gain).toFixed(1)} % of the residual variance against ${(100 * fit.chanceGain).toFixed(1)} % by chance; ${source})`
        : reading === "implausible"
          ? `the model fit's best valve (S ${fmt(fit.bandPct, 2)} % of output, ${fmt(fit.slipsPerCycle, 2)} slips per cycle) ${fit.atEdge ? "has the largest band searched, beyond the output's swing" : "seldom moves"}: not a stick-slip cycle (${source})`
          : `a sticking valve (S ${fmt(fit.bandPct, 2)} %, J ${fmt(fit.jumpPct, 2)} % of output) explains ${(100 * gain).toFixed(0)} % of the residual variance a linear valve leaves, ${(100 * fit.chanceGain).toFixed(1)} % expected by chance${fit.noiseShare >= 0.1 ? `; PV's white measurement noise, which no valve explains, is about ${(100 * fit.noiseShare).toFixed(0)} % of that residual` : ""} (${source})`,
  };
}

/** A clear gain of the coarse fit of an integrating loop (stiction-integrating.ts). */
function coarseFitTest({ fit, cycleAmplitudePct }: CoarseLevelFit): { figures: StictionTests["modelFit"]; line: string; reading: StictionFitReading } {
  const gain = 1 - fit.residualRatio;
  return {
    reading: "clear",
    figures: { applicable: true, residualRatio: fit.residualRatio, bandPct: fit.bandPct, jumpPct: fit.jumpPct, note: `stick-slip explains PV over ${COARSE_BLOCKS_PER_CYCLE} blocks per cycle (integrating loop)` },
    line: `on this integrating loop a sticking valve (S ${fmt(fit.bandPct, 2)} %, J ${fmt(fit.jumpPct, 2)} % of output, within the output cycle's amplitude of ${fmt(cycleAmplitudePct, 2)} %) explains ${(100 * gain).toFixed(0)} % of the residual variance a linear valve leaves over ${COARSE_BLOCKS_PER_CYCLE} blocks per cycle, where the level's ramps between slips outgrow its measurement noise; ${(100 * fit.chanceGain).toFixed(1)} % expected by chance (stiction model fit: Jelali 2008, model of Choudhury et al. 2005; coarse blocks for integrating loops after Horch 2000)`,
  };
}

/**
 * Under random loads without a detected oscillation (ringing only), a replacing model fit that
 * shows no gain does not contradict a stick-slip shape: MV's lags also carry the controller's
 * load estimate. The nested fit (the valve added to MV) decides; only a clear gain counts.
 */
function nestedFitClear(mv: Float64Array, pv: Float64Array, P: number, evidence: string[]): boolean {
  const fit = fitStictionModel(mv, pv, P, true);
  if (!fit || readStictionFit(fit) !== "clear") return false;
  evidence.push(
    `under random loads MV also carries the controller's load estimate; a sticking valve (S ${fmt(fit.bandPct, 2)} % of output) added to MV explains ${(100 * (1 - fit.residualRatio)).toFixed(0)} % of the residual variance MV alone leaves, ${(100 * fit.chanceGain).toFixed(1)} % expected by chance (nested stiction model fit)`,
  );
  return true;
}

/**
 * The half-cycles read triangular only when their mean per-half-cycle index exceeds 0.5 by this
 * many standard errors (ours; three, as the model fit's chance gain): a few noisy half-cycles of
 * a sinusoid can pool to 0.6 by chance.
 */
const SHAPE_T = 3;

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
export function curveFitIndex(x: Float64Array, periodSamples: number): { index: number; halfCycles: number; tStat: number } | null {
  if (periodSamples < 16 || x.length < 2 * periodSamples) return null;
  const hc = findHalfCycles(x, periodSamples);
  let mseSin = 0;
  let mseTri = 0;
  // per half-cycle index, for the spread of the pooled one
  let s1 = 0;
  let s2 = 0;
  for (const [a, b] of hc.spans) {
    const L = b - a;
    const sin = fitShape(hc.x, a, b, sineShape(L));
    mseSin += sin;
    let bestTri = Infinity;
    const tri = new Float64Array(L);
    for (let q = 0.15; q <= 0.851; q += 0.05) {
      const peak = q * L;
      for (let t = 0; t < L; t++) tri[t] = t + 0.5 <= peak ? (t + 0.5) / peak : (L - t - 0.5) / (L - peak);
      bestTri = Math.min(bestTri, fitShape(hc.x, a, b, tri));
    }
    mseTri += bestTri;
    const k = sin + bestTri > 0 ? sin / (sin + bestTri) - 0.5 : 0;
    s1 += k;
    s2 += k * k;
  }
  const count = hc.spans.length;
  if (count < 3 || !(mseSin + mseTri > 0)) return null;
  const mean = s1 / count;
  const sd = Math.sqrt(Math.max(0, (s2 - count * mean * mean) / (count - 1)));
  return { index: mseSin / (mseSin + mseTri), halfCycles: count, tStat: sd > 0 ? mean / (sd / Math.sqrt(count)) : mean > 0 ? Infinity : mean < 0 ? -Infinity : 0 };
}

/** Longest run of included samples, as [start, end). */
export function longestRun(include: Uint8Array): [number, number] {
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

/**
 * An integrating (level) loop whose error neither oscillates nor rings: under random loads the
 * stick-slip cycle of a level loop often has no dominant period (the ramp between two slips lasts
 * until the integral action has moved the output through the band, which the loads speed up or
 * slow down). The time scale of that cycle is the integral time, so the coarse model fit
 * (stiction-integrating.ts) is run with 12 blocks per integral time (ours), and its clear reading
 * within its guards makes the verdict `likely`; null (the usual "no cycle seen") otherwise.
 */
function quietLevelStiction(input: StictionInput, tiS: number, tests: StictionTests): StictionResult | null {
  const [s, e] = longestRun(input.include);
  const coarse = coarseLevelFit(input.mv.subarray(s, e), input.pv.subarray(s, e), tiS / input.T);
  if (!coarse?.clear) return null;
  const model = coarseFitTest(coarse);
  tests.modelFit = model.figures;
  tests.crossCorrelation.note = tests.curveFit.note = "no oscillation";
  return {
    verdict: "likely",
    evidence: [
      "likely valve stiction: a sticking valve explains the level markedly better than a linear one, though the error has no dominant cycle (a level loop's stick-slip ramps vary in length with the loads)",
      `${model.line}; blocks of a twelfth of the integral time (${fmt(tiS, 1)} s), the time scale of the ramps between slips`,
    ],
    tests,
  };
}

/** ACF depth below which the error counts as ringing (as in the assessment's own ringing test). */
const RING_DEPTH = -0.15;

/**
 * The whole record's error neither oscillates nor rings, but the set point moves: set-point
 * steps can hide a stick-slip cycle from that autocorrelation (stiction-setpoint.ts). When the
 * error rings within the constant-set-point stretches, the usual tests are asked at that period,
 * as on a ringing loop; only their `likely` counts (null otherwise: no cycle seen).
 */
function ringsBetweenMoves(input: StictionInput, sp: NonNullable<StictionInput["setPoint"]>): StictionResult | null {
  const skip = input.ti !== null ? Math.ceil(input.ti / input.T) : 0;
  const ring = setPointRinging(sp.e, sp.sp, input.include, sp.tol, skip);
  if (!ring || ring.depth >= RING_DEPTH) return null;
  const res = assessStiction({ ...input, setPoint: undefined, oscillating: true, ringingOnly: true, periodS: ring.periodSamples * input.T });
  if (res.verdict !== "likely") return null;
  res.evidence.splice(
    1,
    0,
    `between set-point moves the error rings (autocorrelation dips to ${fmt(ring.depth)} at ${fmt((ring.periodSamples / 2) * input.T, 1)} s over ${ring.stretches} constant-set-point stretches, each less its first integral time of settling), which the set-point steps hide in the whole record; the tests were asked at a period of ${fmt(ring.periodSamples * input.T, 1)} s`,
  );
  return res;
}

export function assessStiction(input: StictionInput): StictionResult {
  const tests: StictionTests = {
    crossCorrelation: { applicable: false, oddness: null, signal: input.integrating ? "pv-increments" : "pv", note: "" },
    curveFit: { applicable: false, index: null, signal: input.integrating ? "pv" : "mv", note: "" },
    modelFit: { applicable: false, residualRatio: null, bandPct: null, jumpPct: null, note: "" },
  };
  const evidence: string[] = [];
  if (!input.oscillating && input.integrating && input.ti !== null && !input.compressed && !input.outsideOscillation) {
    const quiet = quietLevelStiction(input, input.ti, tests);
    if (quiet) return quiet;
  }
  if (!input.oscillating && input.setPoint && !input.compressed && !input.outsideOscillation) {
    const between = ringsBetweenMoves(input, input.setPoint);
    if (between) return between;
  }
  if (!input.oscillating || input.periodS === null) {
    tests.crossCorrelation.note = tests.curveFit.note = tests.modelFit.note = "no oscillation";
    return { verdict: "unlikely", evidence: ["no limit cycle in the data, so no stick-slip cycle seen (a valve can still stick without cycling; a valve travel test decides)"], tests };
  }
  if (input.compressed) {
    tests.crossCorrelation.note = tests.curveFit.note = tests.modelFit.note = "withheld: compressed data";
    return { verdict: "undetermined", evidence: ["withheld: the export looks compressed or quantised, which fakes stick-slip shapes"], tests };
  }
  if (input.outsideOscillation) {
    tests.crossCorrelation.note = tests.curveFit.note = tests.modelFit.note = "withheld: oscillation from outside";
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
    const beyondChance = fit.tStat >= SHAPE_T;
    shape = fit.index >= triangular && beyondChance ? "triangular" : fit.index <= 0.4 ? "sinusoidal" : "inconclusive";
    tests.curveFit.note = shape;
    evidence.push(`${input.integrating ? "PV" : "MV"} half-cycles are ${shape} (stiction index ${fmt(fit.index)} over ${fit.halfCycles} half-cycles, t ${fmt(fit.tStat)}; >= 0.6 triangular, <= 0.4 sinusoidal: He et al. 2007)`);
  } else {
    tests.curveFit.note = "too few clean half-cycles";
    evidence.push("curve-fit test withheld: too few clean half-cycles");
  }
  // Model fit (Jelali 2008): does a valve that holds still until the output has moved by S
  // explain PV better than one that follows the output? Withheld when the output rests at a limit
  // (another way for the valve to hold still).
  const model = modelFitTest(u, input.pv.subarray(s, e), P, input.mvLimits, input.integrating);
  tests.modelFit = model.figures;
  if (model.line) evidence.push(model.line);
  // The shape and the model fit are the two independent tests; the cross-correlation of MV and
  // PV is fixed by the controller's own phase at the cycle's period (MV = C(SP - PV)), so it
  // mostly tells whether integral action dominates there, which is Horch's known limit; it
  // confirms or tempers, it does not veto.
  let verdict: StictionFigures["verdict"] = "undetermined";
  const mr = model.reading;
  if (mr === "clear" && shape !== "sinusoidal" && shape !== "withheld") verdict = "likely";
  else if (mr === "clear" && shape === "withheld") evidence.push("the model fit alone points to stick-slip, but without clean half-cycles the shape test cannot confirm it, and a slow load can also favour a valve that seldom moves (undetermined)");
  else if (shape === "triangular" && mr !== "none") verdict = "likely";
  else if (shape === "triangular" && input.ringingOnly && nestedFitClear(u, input.pv.subarray(s, e), P, evidence)) verdict = "likely";
  else if (shape === "triangular") evidence.push("the two tests disagree: the half-cycles look like stick-slip, but a sticking valve explains PV no better than a linear one (undetermined)");
  else if (shape === "sinusoidal" && mr === "clear") evidence.push("the two tests disagree: the half-cycles are sinusoidal, but a sticking valve explains PV better than a linear one (undetermined)");
  else if (shape === "sinusoidal") verdict = "unlikely";
  else if (mr === "none") verdict = "unlikely";
  else {
    // too few cycles for either test to decide: say how long to wait rather than guess (stiction-few-cycles.ts)
    const wait = fit && model.figures.note === "too few cycles" && shape === "inconclusive" && fit.index >= (input.ringingOnly ? 0.65 : 0.6) ? fewCyclesWait(u.length, P, input.T, fit.halfCycles) : null;
    if (wait) {
      evidence.push(wait.line);
      return { verdict, evidence, tests, needsS: wait.needsS };
    }
    if (horch === "even") verdict = "unlikely";
  }
  if (verdict === "likely") {
    evidence.unshift(`likely valve stiction: ${mr === "clear" ? "a sticking valve explains PV markedly better than a linear one" : "the cycles have the shape of a stick-slip cycle"}`);
    if (horch === "even") evidence.push("the cross-correlation test reads even, as it does whenever proportional action dominates at the cycle's period; the shape test is the stronger sign here");
  }
  return { verdict, evidence, tests };
}

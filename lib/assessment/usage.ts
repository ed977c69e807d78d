/**
 * How the loop is used (common practice, no single source): time in the designed mode (service
 * factor), in manual, with the output at a limit (saturation), valve travel and reversals per
 * hour, and the PV noise band (±3σ of the sample-to-sample noise at steady state).
 */
import type { LoopConfig } from "./config";
import { noiseSigma } from "./signal";
import { MODE_AUTO, MODE_CASCADE, MODE_MANUAL, type AssessWindow } from "./window";

export interface UsageFigures {
  serviceFactor: number | null;
  manual: number;
  saturation: number;
  /**
   * Times the output went from one limit to the other (through the range). A load beyond the
   * output's range pins it at one limit for long spells; an output driven from stop to stop,
   * many times, is the symptom of a cycle, not of a load the valve cannot meet.
   */
  limitAlternations: number;
  /** Share of good samples at the limit less used (0 when only one limit is reached). */
  saturationMinor: number;
  valveTravelPctPerHour: number;
  valveReversalsPerHour: number;
  /** ±3σ of PV noise, PV units. */
  noiseBand: number;
  /** σ of PV noise in % of span, and of MV noise in %. */
  pvNoisePct: number;
  mvNoise: number;
  /**
   * Share of good samples where the output stays exactly as it was while PV moves, away from
   * the output's limits: a controller in auto moves its output with every PV change, so a held
   * output means manual even when the export has no mode column (common practice).
   */
  heldOutput: number;
}

/** Output within 0.5 % of its range from a limit counts as at the limit (common practice). */
const LIMIT_BAND = 0.005;

export function computeUsage(w: AssessWindow, config: LoopConfig): UsageFigures {
  const { mvLo, mvHi } = config.controller;
  const band = LIMIT_BAND * (mvHi - mvLo);
  let normal = 0;
  let manual = 0;
  let known = 0;
  let sat = 0;
  let satLo = 0;
  let alternations = 0;
  let lastSide = 0;
  let goodCount = 0;
  const wanted = config.normalMode === "cascade" ? MODE_CASCADE : MODE_AUTO;
  for (let i = 0; i < w.n; i++) {
    const m = w.mode[i]!;
    if (m !== 255) {
      known++;
      if (m === wanted) normal++;
      if (m === MODE_MANUAL) manual++;
    }
    if (w.good[i]) {
      goodCount++;
      const u = w.mv[i]!;
      const side = u <= mvLo + band ? -1 : u >= mvHi - band ? 1 : 0;
      if (side !== 0) {
        sat++;
        if (side < 0) satLo++;
        if (lastSide !== 0 && side !== lastSide) alternations++;
        lastSide = side;
      }
    }
  }
  const mvNoise = noiseSigma(w.mv);
  const pvNoisePct = noiseSigma(w.pvPct);
  // Travel and reversals with a hysteresis of 3 MV noise sigmas (at least 0.05 % of range), so
  // measurement noise on the output does not count as valve movement.
  const h = Math.max(3 * mvNoise, 0.0005 * (mvHi - mvLo));
  let travel = 0;
  let reversals = 0;
  let anchor = w.mv[0] ?? 0;
  let dir = 0;
  for (let i = 1; i < w.n; i++) {
    const u = w.mv[i]!;
    const d = u - anchor;
    if (Math.abs(d) >= h) {
      const s = d > 0 ? 1 : -1;
      if (dir !== 0 && s !== dir) reversals++;
      dir = s;
      travel += Math.abs(d);
      anchor = u;
    }
  }
  // Only runs of 30+ samples count (a quantised output of a slow controller repeats briefly).
  let held = 0;
  let heldOf = 0;
  let run = 0;
  let runMoving = 0;
  for (let i = 1; i <= w.n; i++) {
    const same = i < w.n && w.good[i] === 1 && w.good[i - 1] === 1 && w.mv[i] === w.mv[i - 1];
    if (same) {
      run++;
      if (w.pv[i] !== w.pv[i - 1]) runMoving++;
      continue;
    }
    const u = w.mv[i - 1]!;
    if (run >= 30 && u > mvLo + band && u < mvHi - band) held += runMoving;
    run = 0;
    runMoving = 0;
  }
  for (let i = 1; i < w.n; i++) if (w.good[i] && w.good[i - 1] && w.pv[i] !== w.pv[i - 1]) heldOf++;
  const hours = (w.n * w.T) / 3600;
  return {
    serviceFactor: w.hasMode && known > 0 ? normal / known : null,
    manual: known > 0 ? manual / known : 0,
    saturation: goodCount > 0 ? sat / goodCount : 0,
    limitAlternations: alternations,
    saturationMinor: goodCount > 0 ? Math.min(satLo, sat - satLo) / goodCount : 0,
    valveTravelPctPerHour: hours > 0 ? travel / hours : 0,
    valveReversalsPerHour: hours > 0 ? reversals / hours : 0,
    noiseBand: (3 * pvNoisePct * w.pvSpan) / 100,
    pvNoisePct,
    mvNoise,
    heldOutput: heldOf > 0 ? held / heldOf : 0,
  };
}

/**
 * Signs of a measurement fault (common practice; thresholds ours): samples of bad quality, a PV
 * that stays exactly constant for far longer than its noise allows (frozen transmitter or a
 * fault code written as a value), and a PV that leaves its range while the output was still free
 * (a saturated loop also drives PV out of range, but only after its output reached a limit),
 * and a PV beyond the limits a healthy 4–20 mA transmitter can report at all: NAMUR NE 43
 * (recommendation, cited from memory) keeps the measurement within 3.8–20.5 mA (−1.25 % to
 * +103.125 % of span) and reserves ≤ 3.6 mA and ≥ 21 mA for failure signals, so a PV past those
 * limits is a failed measurement whatever the output does (a saturated process pins its
 * transmitter at most at the measurement limits).
 */
import type { LoopConfig } from "./config";
import type { AssessWindow } from "./window";

export interface SensorFigures {
  badQuality: number;
  /** Share of time in exactly-constant PV runs far longer than noise allows. */
  flatShare: number;
  longestFlatS: number;
  /** Share of time out of range in episodes that began with the output free. */
  outOfRange: number;
  /** Share of good samples beyond the NE 43 measurement limits (failure-signal region). */
  failureSignal: number;
}

/** NE 43 measurement limits in % of span: 3.8 mA and 20.5 mA on a 4–20 mA range. */
export const NE43_LO_PCT = -1.25;
export const NE43_HI_PCT = 103.125;

/** Constant runs shorter than this many samples are ordinary (held or quantised values). */
const MIN_FLAT_SAMPLES = 30;

export function sensorFigures(w: AssessWindow, config: LoopConfig, repeatShare: number): SensorFigures {
  const { mvLo, mvHi } = config.controller;
  const band = 0.005 * (mvHi - mvLo);
  const atLimit = (i: number) => w.mv[i]! <= mvLo + band || w.mv[i]! >= mvHi - band;
  // With many repeats anyway (quantised or held data), a run must be much longer to count.
  const minRun = Math.max(MIN_FLAT_SAMPLES, Math.ceil(MIN_FLAT_SAMPLES / Math.max(0.01, 1 - repeatShare)));
  let flat = 0;
  let longest = 0;
  let start = 0;
  for (let i = 1; i <= w.n; i++) {
    if (i < w.n && w.pv[i] === w.pv[start] && w.good[i]) continue;
    const len = i - start;
    // A run pinned at the range end while the output is at a limit is saturation, not a fault.
    const pinned = (w.pv[start]! <= config.pvLo || w.pv[start]! >= config.pvHi) && atLimit(start);
    if (len >= minRun && w.good[start] && !pinned) {
      flat += len;
      longest = Math.max(longest, len);
    }
    start = i;
  }
  const margin = 0.01 * w.pvSpan;
  let outside = 0;
  let failure = 0;
  let goodCount = 0;
  const failLo = config.pvLo + (NE43_LO_PCT / 100) * w.pvSpan;
  const failHi = config.pvLo + (NE43_HI_PCT / 100) * w.pvSpan;
  let inEpisode = false;
  let episodeCounts = false;
  for (let i = 0; i < w.n; i++) {
    if (!w.good[i]) continue;
    goodCount++;
    const v = w.pv[i]!;
    if (v < failLo || v > failHi) failure++;
    const out = v < config.pvLo - margin || v > config.pvHi + margin;
    if (out && !inEpisode) {
      inEpisode = true;
      episodeCounts = !atLimit(i);
    } else if (!out) inEpisode = false;
    if (out && episodeCounts) outside++;
  }
  return {
    badQuality: w.badQualityShare,
    flatShare: w.n ? flat / w.n : 0,
    longestFlatS: longest * w.T,
    outOfRange: goodCount ? outside / goodCount : 0,
    failureSignal: goodCount ? failure / goodCount : 0,
  };
}

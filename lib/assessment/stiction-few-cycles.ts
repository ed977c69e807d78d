/**
 * A record with too few cycles for the stiction tests to decide (issue #12, ours): the half-cycles
 * lean to a stick-slip shape (He, Wang, Pottmann & Qin 2007's index at or above its triangular
 * threshold) but not beyond chance over so few of them, and the record is too short for the
 * stiction model fit (Jelali 2008, from memory; stiction-fit.ts needs six cycles and 200 blocks of
 * a 24th of a cycle). Each stick-slip cycle slips twice, so a loop that cycles a few times in the
 * record has slipped a few tens of times at most; neither test has the numbers to tell a sticking
 * valve from a slow linear mode then (a dead-time loop's output ramps through its dead time, which
 * also leans triangular). Rather than a verdict the data cannot carry, the finding is
 * `undetermined` with the data time the model fit needs (`needsS`).
 */
import { fmt } from "./oscillation";
// The model fit's needs (fitStictionModel's guards): cycles, blocks, blocks per cycle, shortest cycle in samples.
import { FIT_BLOCKS_PER_CYCLE, FIT_MIN_BLOCKS, FIT_MIN_CYCLES, FIT_MIN_PERIOD } from "./stiction-fit";

/** Samples the model fit needs for a cycle of `periodSamples` (null: it never runs at that period). */
export function fitSamplesNeeded(periodSamples: number): number | null {
  if (!(periodSamples >= FIT_MIN_PERIOD)) return null;
  const d = Math.max(1, Math.floor(periodSamples / FIT_BLOCKS_PER_CYCLE));
  return Math.ceil(Math.max(FIT_MIN_CYCLES * periodSamples, FIT_MIN_BLOCKS * d));
}

/**
 * The wait when a record of `n` samples (spacing `T` s) is too short for the model fit at a cycle
 * of `periodSamples`; null when it is long enough (the fit was withheld for another reason) or
 * the fit never runs at that period.
 */
export function fewCyclesWait(n: number, periodSamples: number, T: number, halfCycles: number): { needsS: number; line: string } | null {
  const needed = fitSamplesNeeded(periodSamples);
  if (needed === null || n >= needed) return null;
  const needsS = Math.ceil((needed - n) * T);
  return {
    needsS,
    line: `undetermined: the ${halfCycles} half-cycles lean to a stick-slip shape, too few to be sure (He et al. 2007), and ${fmt(n / periodSamples, 1)} cycles are too few for the stiction model fit (it needs ${fmt(needed / periodSamples, 1)}); about ${needsS} s more data decide`,
  };
}

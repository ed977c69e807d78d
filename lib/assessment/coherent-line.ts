/**
 * A cycle that keeps its phase over the whole record comes from outside the loop, not from a
 * sticking valve (issue #12; the argument is ours, built on published properties):
 *
 * - A stick-slip cycle is the loop's own limit cycle: its period is set by the loop (it changes
 *   with the integral time and with the band S and jump J, Choudhury, Shah & Thornhill, *Diagnosis
 *   of Process Nonlinearities and Valve Stiction*, Springer 2008, from memory): each half-cycle
 *   lasts until MV has ramped through the band, and how long that takes depends on the error that
 *   drives the ramp, which the loop's random loads and noise change from cycle to cycle (the
 *   clock regularity of load-or-valve.ts: 12 % and more on the cross-check's sticking valves, 14 %
 *   and more in the tests). Each cycle starts from the last slip, so these errors accumulate: the
 *   phase of an autonomous limit cycle under noise is a random walk (phase diffusion; common to
 *   every self-sustained oscillator, e.g. Demir, Mehrotra & Roychowdhury, IEEE Trans. Circuits
 *   Syst. I 47, 2000, from memory). With a per-cycle spread c of the period the spectral peak is a
 *   Lorentzian of half-width pi c^2 / P (in frequency; P the period), that is pi c^2 N bins of a
 *   record of N cycles.
 * - A cycle driven from outside keeps the period and phase of its source (a machine, a
 *   neighbouring loop, a clock); the loop only filters it, and noise shifts its zero crossings
 *   without the shift carrying over to the next cycle. Its spectrum is a line as narrow as the
 *   window however many cycles the record holds.
 *
 * So where the error carries a spectral line (spectral-line.ts) at the oscillation's period that
 * stands at least 100× above its immediate neighbours (±4–9 bins; the line test asks 10×), and
 * the record holds at least 44 cycles, the cycle is taken as outside however stick-slip-like its
 * shape: shape and model-fit tests read the waveform, which an outside load can give too (its
 * harmonics, a sticking valve's band fitted to its extremes), not where its period comes from.
 * Why 100×: a cycle whose phase diffuses enough to widen its peak to a half-width of one bin
 * reads at least that in fewer than 5 % of records (95th percentiles 72–92 over 44–100 cycles,
 * SciPy's Hann periodogram, 200 seeds each; checked in tests/assessment/coherent-line.test.ts),
 * while an outside cycle's line is limited only by the background (its neighbours hold no leakage
 * of its own beyond the window's side lobes). Why 44 cycles: there pi c^2 N reaches one bin for a
 * period spread c of 8.5 % and two bins for the least spread seen on sticking valves, 12 %
 * (load-or-valve.ts); a sticking valve whose loads are so weak that its period varies by less
 * than that over the record keeps its phase too and is not told apart (seen: the tests' low-gain
 * loop with weak loads reached 11–20×, over 60–70 cycles, against 135 and more for the benchmark's
 * outside sinusoids that the stiction tests had blamed on a valve).
 *
 * The loop's own decaying mode (mayBeOwnMode, ownModeLine): a stable linear loop under random
 * loads has a mode of damping ratio ζ whose spectral peak is a Lorentzian of half-power
 * half-width ζ f0 (the resonance of a second-order system; common practice), ζN bins over N
 * cycles: the same shape as a diffusing phase's, so the same bar applies. A peak under 100× its
 * immediate neighbours is not narrower than a half-width of one bin, which a mode with ζ ≥ 1/N
 * gives (over 44–100 cycles a decay ratio e^{−2πζ/√(1−ζ²)} of 0.86–0.94 and below; a half-width
 * of a few bins still passes the line test's 10×: tests/assessment/own-mode-line.test.ts, AR(2)
 * modes of decay ratio 0.88 and 0.94 over 60 cycles are lines in 22 and 38 of 60 seeds and none
 * reaches 100×). So when the oscillation test also sees the cycle decay from one period to the
 * next (diagnosis.ts), a line under that bar is read as the loop's own mode, not as an outside
 * line. A peak of 100× or more needs ζ < 1/N and stays outside; over few cycles that admits
 * modes of the aggressive range too (20 cycles: decay ratios above 0.73), which is a limit.
 *
 * Fails on: a sticking valve with neither loads nor measurement noise (a deterministic limit cycle
 * is a line; no plant runs so); a sticking valve whose cycle is locked to an outside periodic load
 * (entrained: then the load sets the period and the valve only adds to it); records of fewer than
 * MIN_CYCLES cycles (not read).
 */
import { fmt } from "./oscillation";
import { isLine, type SpectralLine } from "./spectral-line";

/** Per-cycle spread of a stick-slip cycle's period that still widens its peak to one bin over MIN_CYCLES: pi c^2 N = 1. */
const SPREAD_SPARED = 0.085;
/** Fewest cycles in the record: pi SPREAD_SPARED^2 N >= 1 bin. */
export const MIN_CYCLES = Math.ceil(1 / (Math.PI * SPREAD_SPARED ** 2));
/** A line at least this many times its immediate neighbours keeps its phase (see the header; the line test's own bar is 10). */
export const COHERENT_NEAR = 100;
/** The line and the oscillation must name the same period (the site grouping's ±5 %). */
const SAME_PERIOD = 0.05;

/**
 * The evidence line when the error's cycle keeps its phase like an outside source's (see the
 * header); null when there is no line at the period, or too few cycles to tell.
 */
export function coherentOutsideCycle(line: SpectralLine | null, periodS: number | null, spanS: number): string | null {
  if (!isLine(line) || line!.near < COHERENT_NEAR || periodS === null || !(periodS > 0)) return null;
  if (Math.abs(line!.periodS - periodS) > SAME_PERIOD * periodS) return null;
  const cycles = spanS / periodS;
  if (cycles < MIN_CYCLES) return null;
  return (
    `likely an oscillation from outside: the cycle of ${fmt(line!.periodS, 1)} s keeps its phase over ${fmt(cycles, 0)} cycles ` +
    `(a spectral line ${fmt(line!.ratio, 0)}× the local median and ${fmt(line!.near, 0)}× its immediate neighbours, ${(100 * line!.share).toFixed(0)} % of the variance), ` +
    `as an outside source's fixed period does; a sticking valve's stick-slip cycle varies in length with the loads and loses its phase over so many cycles (a wider peak)`
  );
}

/** A line no narrower than a damped mode's peak of half-width one bin (see the header): possibly the loop's own mode. */
export function mayBeOwnMode(line: SpectralLine): boolean {
  return line.near < COHERENT_NEAR;
}

/**
 * The evidence line when a decaying cycle's spectral line is not narrower than the loop's own
 * damped mode could make it (see the header): the line test alone does not show an outside source.
 */
export function ownModeLine(line: SpectralLine): string {
  return (
    `the error's spectral peak at ${fmt(line.periodS, 1)} s (${fmt(line.ratio, 0)}× the local median) stands ${fmt(line.near, 0)}× its immediate neighbours, ` +
    `under the ${COHERENT_NEAR}× that tells an outside line from the loop's own lightly damped mode (a peak of half-width ζ f0, ζ the damping ratio), and the cycle decays as that mode does`
  );
}

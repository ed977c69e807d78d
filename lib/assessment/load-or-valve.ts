/**
 * Outside load or sticking valve? A sticking valve and an outside load that switches abruptly
 * (a square wave: a feed switched between two rates, an on/off heater, a batch step upstream)
 * both give PV jumps with MV ramps, and both pass the stick-slip shape and model-fit tests of
 * stiction.ts. What tells them apart is the order of cause and effect within each half-cycle of
 * the control error:
 *
 * - A sticking valve moves only after the controller output has travelled through its band
 *   since the last slip (the two-parameter model of Choudhury, Thornhill & Shah, Control Eng.
 *   Practice 13, 2005; the stick-slip signatures of Choudhury, Shah & Thornhill, Automatica 40,
 *   2004, from memory). While it sticks the error holds (self-regulating process) or grows
 *   (integrating process), since nothing the controller does reaches the process; the slip then
 *   throws PV across the set point. The error is largest at the end of its half-cycle: it
 *   builds up, then is released. (Yamashita, Control Eng. Practice 14, 2006, from memory, reads
 *   the same stuck phase qualitatively: MV moves while PV holds.)
 * - An outside load step comes whenever the load switches, usually to a loop at rest; PV leaves
 *   the set point at once, and the controller, whose valve follows it, then removes the
 *   deviation. The error is largest at the start of its half-cycle: it jumps, then decays.
 * - A linear oscillation (a loop's own mode, a sinusoidal load) is time-reversible: a stationary
 *   Gaussian ARMA process has the same statistics run backwards (Weiss, J. Appl. Probab. 12,
 *   1975, from memory), so its half-cycles are on average symmetric in time.
 *
 * Two figures on the half-cycles of the error (between zero crossings of the error less its
 * local mean, as the curve-fit test finds them, see half-cycles.ts):
 *
 * 1. Time asymmetry: for each half-cycle q = (A2 - A1)/(|A1| + |A2|), A1 and A2 the error's area
 *    in its first and second half (signed with the half-cycle's sign, lightly smoothed). q < 0:
 *    jump then decay; q > 0: build-up then release; q = 0: symmetric. The mean q is read against
 *    its standard error. It is the error, not PV increments, on integrating loops too: there the
 *    stuck phase is a ramp of the error and the stick-slip cycle a triangle (symmetric), while a
 *    load step on a PI-controlled integrator rises faster than the controller brings it back.
 * 2. Clock regularity: the coefficient of variation of the times between jumps, each taken
 *    where the error first reaches half its half-cycle's peak (the zero crossing is a poor clock
 *    when the error rests near zero before a jump); the quantity behind the regularity of
 *    Thornhill, Huang & Zhang (J. Process Control 13, 2003). A load switched by a clock or a
 *    sequence repeats to within that jitter; a
 *    stick-slip cycle slips when MV has ramped through the band, and how long that takes depends
 *    on the error driving the ramp, which the loop's random loads change from cycle to cycle.
 *    Needed because a sticking valve whose band is small against the output's swing can also
 *    show jump-then-decay half-cycles: under a large error MV moves faster than its noise, the
 *    valve then follows it (the published model sticks only when MV reverses), and the error
 *    decays as in a linear loop until it is small enough for the valve to stick again (seen with
 *    the model of Choudhury et al. 2005 on a low-gain PI loop in tests/assessment).
 *
 * An abrupt outside load is read when both agree: jump-then-decay half-cycles that repeat like a
 * clock. A load switched at irregular times (not periodic) is not caught here; it seldom makes a
 * regular cycle the stiction tests would take for stick-slip either.
 *
 * Horch's cross-correlation test (Control Eng. Practice 7, 1999) cannot make this distinction:
 * at a constant set point MV is a linear function of past PV whatever moves PV, so the MV–PV
 * phase is the controller's own in both cases (its published failure on outside oscillations).
 * An oscillation that persists in manual, and loops of one site sharing the period (Thornhill,
 * Huang & Zhang, J. Process Control 13, 2003; the plant-wide view of Thornhill & Horch, Control
 * Eng. Practice 15, 2007, from memory), point outside too; they are checked elsewhere
 * (diagnosis.ts, the live site grouping).
 */
import { findHalfCycles } from "./half-cycles";
import { fmt } from "./oscillation";
import { longestRun } from "./stiction";

export interface LoadOrValveInput {
  /** Control error SP - PV, % of span. */
  e: Float64Array;
  sp: Float64Array;
  /** Closed-loop, good samples (1). */
  include: Uint8Array;
  T: number;
  periodS: number;
}

export type LoadOrValveReading = "load" | "leans-load" | "valve" | "neutral" | "withheld";

export interface LoadOrValveFigures {
  reading: LoadOrValveReading;
  /** Mean time asymmetry of the error's half-cycles, -1..1 (negative: jump then decay; positive: build-up then release). */
  asymmetry: number | null;
  /** Mean asymmetry over its standard error. */
  tStat: number | null;
  /** Coefficient of variation of the times between jumps (small: a clock-like cycle). */
  lengthCv: number | null;
  halfCycles: number;
  /** One evidence line, or null when withheld for too few half-cycles. */
  line: string | null;
}

/**
 * Asymmetry at or beyond which the half-cycles read as jump-then-decay: the error's second half
 * holds at most four fifths of its first half's area, q = (0.8 - 1)/(0.8 + 1) = -1/9 (ours).
 * Half-cycles of sticking valves (both simulators' valve models, the published two-parameter
 * models of Choudhury et al. 2005 and He et al. 2007) and of linear oscillations stayed within
 * ±0.1 in every recording seen.
 */
export const LOAD_ASYMMETRY = -1 / 9;
/** Asymmetry beyond which the error leans toward jump-then-decay, though less than a load's (ours). */
const LEAN_ASYMMETRY = -0.05;
/** The mean must differ from zero by this many standard errors (as the shape test's t >= 3, ours). */
const ASYMMETRY_T = 3;
/**
 * Coefficient of variation of the times between jumps at or below which (with two standard
 * errors added) the cycle repeats like a clock (ours).
 * Square-wave loads varied by 0-6 % on the cross-check set and 0-3 % in the tests; sticking
 * valves under random loads by 12 % and more (cross-check set, He et al.'s valve model) and 14 %
 * and more (tests, Choudhury et al.'s).
 */
const CLOCK_CV = 0.1;
/** Fewest half-cycles (three cycles) for a reading (ours). */
const MIN_HALF_CYCLES = 6;

/** Time asymmetry q of each half-cycle of x and the times between consecutive jumps (see the header); half-cycles with a set-point move are left out. */
export function halfCycleAsymmetry(x: Float64Array, sp: Float64Array | null, periodSamples: number): { q: number[]; lengths: number[] } {
  const hc = findHalfCycles(x, periodSamples);
  // The finder's centred light smoothing (a twentieth of the period) against measurement noise.
  const s = (i: number) => hc.s[i]!;
  const q: number[] = [];
  const lengths: number[] = [];
  let prevEnd = -1;
  let prevAt = -1;
  for (const [a, b] of hc.spans) {
    // A set-point step is a known abrupt input, not an outside load: leave its half-cycle out.
    if (sp && sp[a] !== sp[b - 1]) continue;
    const half = Math.floor((b - a) / 2);
    let total = 0;
    for (let i = a; i < b; i++) total += s(i);
    const sign = total < 0 ? -1 : 1;
    let a1 = 0;
    let a2 = 0;
    for (let i = 0; i < half; i++) {
      a1 += sign * s(a + i);
      a2 += sign * s(b - 1 - i);
    }
    const den = Math.abs(a1) + Math.abs(a2);
    if (den > 0) q.push((a2 - a1) / den);
    // When the error first reaches half its peak: the jump's time, sharper than the zero crossing
    // (an error at rest near zero crosses it at random before the next jump).
    let peak = 0;
    for (let i = a; i < b; i++) peak = Math.max(peak, sign * s(i));
    let at = a;
    while (at < b && sign * s(at) < peak / 2) at++;
    if (prevEnd === a && prevAt >= 0) lengths.push(at - prevAt);
    prevEnd = b;
    prevAt = at;
  }
  return { q, lengths };
}

function meanSd(v: number[]): [number, number] {
  let sum = 0;
  for (const x of v) sum += x;
  const mean = sum / v.length;
  let ss = 0;
  for (const x of v) ss += (x - mean) ** 2;
  return [mean, Math.sqrt(ss / Math.max(1, v.length - 1))];
}

export function loadOrValve(input: LoadOrValveInput): LoadOrValveFigures {
  const P = input.periodS / input.T;
  const [s, e] = longestRun(input.include);
  const { q, lengths } = halfCycleAsymmetry(input.e.subarray(s, e), input.sp.subarray(s, e), P);
  const n = q.length;
  if (n < MIN_HALF_CYCLES || lengths.length < MIN_HALF_CYCLES - 1) return { reading: "withheld", asymmetry: null, tStat: null, lengthCv: null, halfCycles: n, line: null };
  const [mean, sd] = meanSd(q);
  const se = sd / Math.sqrt(n);
  const t = se > 0 ? mean / se : mean === 0 ? 0 : mean * Infinity;
  const [meanLength, sdLength] = meanSd(lengths);
  const lengthCv = sdLength / meanLength;
  // Its sampling error, about cv/√(2k) for k intervals (normal data; from memory), counts against
  // a clock: a few intervals of a stick-slip cycle can vary little by chance (live windows).
  const clock = lengthCv * (1 + 2 / Math.sqrt(2 * lengths.length)) <= CLOCK_CV;
  const reading: LoadOrValveReading =
    clock && t <= -ASYMMETRY_T && mean <= LOAD_ASYMMETRY ? "load" : clock && t <= -ASYMMETRY_T && mean <= LEAN_ASYMMETRY ? "leans-load" : t >= ASYMMETRY_T && mean >= -LOAD_ASYMMETRY ? "valve" : "neutral";
  const figures = `time asymmetry ${fmt(mean)} over ${n} half-cycles, t ${fmt(t, 1)}; the times between jumps vary by ${fmt(100 * lengthCv, 0)} %`;
  const source = "a linear cycle is time-reversible, Weiss 1975; a sticking valve slips only after MV has crossed its band, Choudhury et al. 2005";
  const line = {
    load: `the error jumps away from the set point and then decays within each half-cycle, and the half-cycles repeat like a clock (${figures}): a load that switches abruptly on its own schedule and that the loop then removes, not a valve that slips when MV has ramped through its band (${source})`,
    "leans-load": `the error's half-cycles lean toward jump-then-decay and repeat like a clock, marks of an abrupt outside load (${figures}; ${source})`,
    valve: `the error builds up within each half-cycle and is then released (${figures}): the order of a stick-slip cycle, where the valve moves only after MV has crossed its band (${source})`,
    neutral: `the error's half-cycles are about symmetric in time (${figures}): no sign of an abrupt outside load (${source})`,
  }[reading];
  return { reading, asymmetry: mean, tStat: t, lengthCv, halfCycles: n, line };
}

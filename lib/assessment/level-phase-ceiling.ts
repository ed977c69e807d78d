/**
 * The phase margin a PI controller can reach at best on an integrating process (a level) whose
 * dead time is entered: a ceiling set by the integral time against the dead time alone, whatever
 * the gain and whatever the process's integrating gain, which routine closed-loop data do not give
 * (Ljung, System Identification, 1999, sec. 13.4).
 *
 * The argument (Bode's phase condition, common practice): an integrating process with a transport
 * delay of at least θ and any further lags has a phase of at most −90° − θω at frequency ω (each
 * lag, the hold of a digital controller and a longer delay only take phase away). A PI controller
 * Kc (1 + 1/(jωTi)) adds −atan(1/(ωTi)), whatever Kc. The phase margin is 180° plus the loop's phase
 * at the crossover frequency, which the gain places anywhere, so it is at most
 *   max over ω of 90° − θω − atan(1/(ωTi)).
 * With x = ωTi and r = Ti/θ the maximum lies at x = √(r − 1) (the derivative −1/r + 1/(1 + x²)
 * vanishes there), giving the ceiling atan(√(r − 1)) − √(r − 1)/r (radians); for r ≤ 1 no gain gives
 * a positive margin (a PI loop on an integrator with Ti at or below the dead time is unstable at
 * every gain). Checked against a numerical search over gains with numpy
 * (tests/reference/generate_level_phase_ceiling.py).
 *
 * Limit: 30°, below which the usual design ranges do not go (phase margin 30–60°, gain margin
 * 1.7–4; common practice, e.g. Seborg, Edgar & Mellichamp, Process Dynamics and Control, from
 * memory): the ceiling is below it when Ti < 3.3 θ. SIMC asks for Ti = 4 (τc + θ), at least 8 θ
 * (Skogestad, J. Process Control 13, 2003, from memory), whose ceiling is 50°.
 *
 * Not for a controller with derivative action (it adds phase lead) or a process that is not
 * integrating (a self-regulating one has more phase than −90° − θω), and only with an entered dead
 * time: the ceiling rests on it, so the evidence says to check it.
 */
import { fmt } from "./oscillation";
import type { AcfDecay } from "./acf-decay";
import { withAggressiveSign } from "./setpoint-overshoot";
import type { Diagnosis } from "./types";

/** Least phase margin of the usual design ranges, degrees (common practice; see above). */
export const MIN_PHASE_MARGIN_DEG = 30;
/** Confidence of the ceiling alone (ours); each agreeing sign in the data adds 0.1 (setpoint-overshoot.ts). */
const ALONE = 0.65;

/** Best phase margin (degrees) of a PI loop on an integrating process with dead time θ, for r = Ti/θ. */
export function phaseMarginCeilingDeg(tiOverDead: number): number {
  if (!(tiOverDead > 1)) return 0;
  const s = Math.sqrt(tiOverDead - 1);
  return ((Math.atan(s) - s / tiOverDead) * 180) / Math.PI;
}

export interface PhaseCeiling {
  tiS: number;
  deadTimeS: number;
  ceilingDeg: number;
}

/** The ceiling of an integrating loop under PI with an entered dead time; null where it does not apply. */
export function levelPhaseCeiling(c: { integrating: boolean; tiS: number | null; tdS: number | null | undefined; deadTimeS: number | null | undefined }): PhaseCeiling | null {
  if (!c.integrating || c.tiS === null || !(c.tiS > 0) || (c.tdS ?? 0) > 0) return null;
  const dead = c.deadTimeS ?? null;
  if (dead === null || !(dead > 0)) return null;
  return { tiS: c.tiS, deadTimeS: dead, ceilingDeg: phaseMarginCeilingDeg(c.tiS / dead) };
}

export interface CeilingContext {
  ringDepth: number | null;
  acfDecay: AcfDecay | null | undefined;
}

/**
 * A ceiling below MIN_PHASE_MARGIN_DEG turns a healthy or sluggish verdict into an aggressive
 * finding (the loop rings at every gain), stronger with the error's weak ringing signs
 * (setpoint-overshoot.ts, withAggressiveSign); an aggressive verdict gains the line.
 */
export function withPhaseCeiling(d: Diagnosis, p: PhaseCeiling | null, x: CeilingContext): Diagnosis {
  if (p === null || p.ceilingDeg >= MIN_PHASE_MARGIN_DEG) return d;
  const line = `with an integral time of ${fmt(p.tiS, 1)} s against the entered dead time of ${fmt(p.deadTimeS, 1)} s (${fmt(p.tiS / p.deadTimeS, 1)} dead times), a PI controller on an integrating process has a phase margin of at most ${fmt(p.ceilingDeg, 0)}° whatever its gain, below the ${MIN_PHASE_MARGIN_DEG}° of the usual design ranges (common practice): an integral time of at least 3.3 dead times is needed for that, SIMC asks for 8 or more (Skogestad 2003)`;
  return withAggressiveSign(d, line, x, {
    alone: ALONE,
    loneNote: "the data do not show the ringing clearly (slow loads through the level can hide it); the ceiling rests on the entered dead time, so check that value first",
  });
}

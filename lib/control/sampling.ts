/**
 * Choosing the estimation period and moving poles between periods.
 *
 * Rule of thumb (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997, ch. 7; quoted
 * from memory, treat as guidance): sample so that the dominant mode's wn T is roughly 0.1 to 0.6.
 * Faster sampling crowds every pole toward z = 1 (z = e^{sT} ~ 1 + sT) and makes least-squares
 * estimation ill-conditioned; slower sampling loses the dynamics. Poles at two periods relate by
 * z2 = z1^(T2/T1) (from z = e^{sT}).
 */
import { AliasingError, ControlArgumentError, NonFiniteInputError } from "./errors";
import { polyRoots } from "./roots";
import type { ArxModel, Complex, DiscreteTf } from "./types";
import { zToS } from "./zplane";

/** Target band for the dominant mode's wn T (radians). */
export const WNT_RANGE = { low: 0.1, high: 0.6 } as const;
/** Aim of the proposal: the geometric middle of the band, sqrt(0.1 * 0.6) ~ 0.245. */
export const WNT_TARGET = Math.sqrt(WNT_RANGE.low * WNT_RANGE.high);
/** Poles with |s| below this (1/s) count as integrators and are not the dominant mode. */
const INTEGRATOR_S = 1e-9;

/** What the proposal is based on. All times in seconds. */
export type PeriodBasis =
  /** A step test read as first order plus dead time: time constant and dead time. */
  | { from: "step-test"; timeConstant: number; deadTime?: number; telemetryPeriod: number }
  /** Continuous poles (1/s), e.g. a first estimate of the process. */
  | { from: "continuous-poles"; poles: Complex[]; telemetryPeriod: number }
  /** Discrete poles at period T (e.g. the current estimate); telemetryPeriod defaults to T. */
  | { from: "discrete-poles"; poles: Complex[]; T: number; telemetryPeriod?: number }
  /** A discrete model (ARX or transfer function) at its own period; telemetryPeriod defaults to model.T. */
  | { from: "model"; model: ArxModel | DiscreteTf; telemetryPeriod?: number };

export interface PeriodProposal {
  /** Integer decimation factor applied to the telemetry period (>= 1). */
  factor: number;
  /** Proposed estimation period in seconds (factor * telemetry period). */
  period: number;
  /** wn T of the dominant mode at the proposed period (radians). */
  wnT: number;
  /** Why, in plain words (numbers included). */
  reason: string;
}

function finitePositive(v: number, what: string): void {
  if (!Number.isFinite(v)) throw new NonFiniteInputError(what);
  if (!(v > 0)) throw new ControlArgumentError(`${what} must be > 0 (got ${v})`);
}

/**
 * Proposes an integer decimation factor of the telemetry period so that the dominant (slowest
 * non-integrating) mode has wn T near 0.245, inside 0.1–0.6 where possible (rule of thumb, see the
 * module doc). The factor is at least 1 (telemetry cannot be made faster) and at most
 * `maxFactor` (default 1000).
 * @throws ControlArgumentError when no non-integrating mode exists or an argument is out of range;
 *   NonFiniteInputError on NaN/infinite input.
 */
export function proposeEstimationPeriod(basis: PeriodBasis, options: { maxFactor?: number } = {}): PeriodProposal {
  const maxFactor = options.maxFactor ?? 1000;
  if (!Number.isInteger(maxFactor) || maxFactor < 1) throw new ControlArgumentError(`maxFactor must be an integer >= 1 (got ${maxFactor})`);
  let wn: number;
  let telemetry: number;
  let source: string;
  let extra = "";
  switch (basis.from) {
    case "step-test": {
      finitePositive(basis.timeConstant, "time constant");
      finitePositive(basis.telemetryPeriod, "telemetry period");
      wn = 1 / basis.timeConstant;
      telemetry = basis.telemetryPeriod;
      source = `step test: time constant ${fmt(basis.timeConstant)} s`;
      if (basis.deadTime !== undefined) {
        if (!Number.isFinite(basis.deadTime)) throw new NonFiniteInputError("dead time");
        if (basis.deadTime < 0) throw new ControlArgumentError(`dead time must be >= 0 (got ${basis.deadTime})`);
        extra = `; dead time ${fmt(basis.deadTime)} s`;
      }
      break;
    }
    case "continuous-poles": {
      finitePositive(basis.telemetryPeriod, "telemetry period");
      wn = dominantWn(basis.poles);
      telemetry = basis.telemetryPeriod;
      source = "continuous poles";
      break;
    }
    case "discrete-poles": {
      finitePositive(basis.T, "pole period T");
      telemetry = basis.telemetryPeriod ?? basis.T;
      finitePositive(telemetry, "telemetry period");
      wn = dominantWn(discreteToS(basis.poles, basis.T));
      source = `discrete poles at T = ${fmt(basis.T)} s`;
      break;
    }
    case "model": {
      const m = basis.model;
      finitePositive(m.T, "model period T");
      telemetry = basis.telemetryPeriod ?? m.T;
      finitePositive(telemetry, "telemetry period");
      const den = "a" in m ? [1, ...m.a] : m.den;
      wn = dominantWn(discreteToS(polyRoots(den), m.T));
      source = `model poles at T = ${fmt(m.T)} s`;
      break;
    }
    default:
      throw new ControlArgumentError("proposeEstimationPeriod: unknown basis");
  }
  const base = wn * telemetry;
  let factor = Math.max(1, Math.min(maxFactor, Math.round(WNT_TARGET / base)));
  // Rounding can leave the band when the band holds few integers; pick the closest in log scale.
  const cost = (k: number): number => Math.abs(Math.log((k * base) / WNT_TARGET));
  for (const k of [factor - 1, factor + 1]) if (k >= 1 && k <= maxFactor && cost(k) < cost(factor)) factor = k;
  const period = factor * telemetry;
  const wnT = wn * period;
  let why: string;
  if (base > WNT_RANGE.high) {
    why = `telemetry is already slow for this mode (wn T = ${fmt(base)} > ${WNT_RANGE.high}); estimate at the telemetry period`;
  } else if (wnT < WNT_RANGE.low) {
    why = `decimation capped at ${maxFactor}; wn T stays at ${fmt(wnT)} (below ${WNT_RANGE.low}), poles will sit close to z = 1`;
  } else {
    why = `averaging ${factor} telemetry samples puts the dominant mode at wn T = ${fmt(wnT)} (band ${WNT_RANGE.low}-${WNT_RANGE.high})`;
  }
  if (basis.from === "step-test" && basis.deadTime !== undefined) {
    extra += ` = ${fmt(basis.deadTime / period)} periods`;
  }
  return {
    factor,
    period,
    wnT,
    reason: `${source}${extra}; dominant wn = ${fmt(wn)} rad/s; ${why}. Rule of thumb wn T 0.1-0.6 (Åström & Wittenmark 1997).`,
  };
}

function fmt(x: number): string {
  return Number(x.toPrecision(3)).toString();
}

/**
 * Continuous equivalents of discrete poles. Poles at the origin (dead time) and on the negative
 * real axis (no continuous equivalent; ringing at the Nyquist frequency, never the slow mode the
 * period is chosen for) are left out.
 */
function discreteToS(poles: Complex[], T: number): Complex[] {
  return poles.filter((z) => Math.hypot(z.re, z.im) > 0 && !(z.im === 0 && z.re < 0)).map((z) => zToS(z, T));
}

function dominantWn(poles: Complex[]): number {
  let best = Infinity;
  for (const s of poles) {
    if (!Number.isFinite(s.re) || !Number.isFinite(s.im)) throw new NonFiniteInputError("pole");
    const mag = Math.hypot(s.re, s.im);
    if (mag > INTEGRATOR_S && mag < best) best = mag;
  }
  if (best === Infinity) throw new ControlArgumentError("no non-integrating mode to base the period on");
  return best;
}

/**
 * Moves discrete poles from period T1 to period T2: z2 = z1^(T2/T1) (principal branch), from
 * z = e^{sT}. Poles at the origin stay there.
 * @throws AliasingError when |arg z1| T2/T1 > pi for some pole (the mode would fold onto another
 *   frequency), and for a negative-real pole whenever T2 != T1 (its continuous equivalent is not
 *   determined); ControlArgumentError for periods that are not > 0.
 */
export function mapPolesToPeriod(poles: Complex[], T1: number, T2: number): Complex[] {
  finitePositive(T1, "T1");
  finitePositive(T2, "T2");
  const ratio = T2 / T1;
  return poles.map((z) => {
    if (!Number.isFinite(z.re) || !Number.isFinite(z.im)) throw new NonFiniteInputError("pole");
    const r = Math.hypot(z.re, z.im);
    if (r === 0) return { re: 0, im: 0 };
    if (ratio === 1) return { re: z.re, im: z.im };
    const theta = Math.atan2(z.im, z.re);
    if (z.im === 0 && z.re < 0 && ratio !== 1) {
      throw new AliasingError(`pole ${z.re} on the negative real axis rings at the Nyquist frequency; its position at T2 = ${T2} s is not determined`);
    }
    if (Math.abs(theta) * ratio > Math.PI * (1 + 1e-12)) {
      throw new AliasingError(
        `pole at angle ${fmt(theta)} rad would alias at T2 = ${T2} s (|arg z| T2/T1 = ${fmt(Math.abs(theta) * ratio)} > pi)`,
      );
    }
    const m = Math.pow(r, ratio);
    return { re: m * Math.cos(theta * ratio), im: m * Math.sin(theta * ratio) };
  });
}

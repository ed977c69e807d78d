/**
 * A loop's assessment: the figures the tracker publishes with every update and that alarms,
 * history, the live summary, the API and the pages read (docs/architecture.md §4). Every figure
 * is defined here once; nothing else selects a dominant pole, picks model or data poles, or
 * computes a decay ratio (tests/architecture/one-home.test.ts checks the source for it).
 *
 * Browser-safe: imports only lib/control and types.
 */
import type { Complex } from "@/lib/control/types";
import { decayRatio as poleDecayRatio, poleCharacteristics, poleCharacteristicsInto } from "@/lib/control/zplane";
import type { PoleDto, SampleQualityDto, TrackerState } from "@/lib/domain/types";
import type { RoutineFindings } from "./findings";

export type { RoutineFindings } from "./findings";

/** Which poles the figures come from: model-based closed-loop poles, else the data-only ones. */
export type PoleSource = "model" | "closed-loop" | "disturbance-response";

/** A time (epoch ms) at which a trend reaches its level, with its interval (epoch ms). */
export interface Crossing {
  at: number;
  low: number;
  high: number;
}

/**
 * The rim forecast. `alarmLevel`: when the decay-ratio trend reaches the loop's low-priority
 * decay-ratio level (period-invariant, the level the `rim-forecast` alarm uses). `radiusOne`: when
 * the spectral-radius trend reaches the unit circle. A screen names the one it shows.
 */
export interface LoopForecast {
  alarmLevel: (Crossing & { decayRatio: number }) | null;
  radiusOne: Crossing | null;
}

/**
 * The slowest-decaying oscillating mode: the pole with the largest per-cycle decay ratio
 * |z|^(2π/|arg z|) over the complex poles (docs/domain.md §1). The largest-radius pair is not
 * always the least damped one.
 */
export interface OscillatingMode extends Complex {
  radius: number;
  /** |arg z| in radians. */
  angle: number;
  decayRatio: number;
  zeta: number;
  /** Oscillation period in seconds, 2πT/|arg z|. */
  periodS: number;
  /** Standard deviation of the radius, when known (not in the live summary). */
  sdRadius?: number | null;
}

/** The dominant pole (largest radius) and its continuous-time reading at the estimation period. */
export interface DominantMode {
  zeta: number | null;
  wn: number | null;
  timeConstant: number | null;
  /** The pole itself (absent in states stored before it was carried). */
  re?: number;
  im?: number;
}

/** What the tracker says about a loop at one moment: the figures every reader shows. */
export interface LoopAssessment {
  /** Epoch ms of the estimate. */
  at: number;
  estimationPeriodS: number;
  trackerState: TrackerState;
  /** Why the tracker is in its state, in words. */
  stateReason: string | null;
  /** Which poles the figures below come from; null when there are none. */
  polesFrom?: PoleSource | null;
  spectralRadius: number | null;
  rimDistance: number | null;
  /** Standard deviation of the spectral radius (confidence). */
  radiusSd: number | null;
  /** Decay ratio of the slowest-decaying oscillating mode (null when no pole oscillates). */
  decayRatio: number | null;
  /** That mode (absent in states stored before it was carried). */
  oscillation?: OscillatingMode | null;
  juryStable: boolean | null;
  /**
   * A pole's conditioning bound straddles the unit circle: the coefficients do not decide on
   * which side it lies ("undecided near the rim"); no unstable verdict (juryStable is null) or alarm.
   */
  rimUndecided?: boolean;
  dominant: DominantMode | null;
  gainHeadroom: number | null;
  forecast: LoopForecast | null;
  /** Sample quality seen by the tracker (absent in states stored before it existed). */
  sampleQuality?: SampleQualityDto;
  /**
   * The latest routine-data finding of the live assessor (server/assessment runs lib/assessment
   * on the loop's window and attaches its verdict to the tracker), once it has run.
   */
  routine?: RoutineFindings;
}

/** The poles the loop's figures come from: model-based, else data-only. */
export function effectivePoles<P>(s: { modelPoles: readonly P[]; dataPoles: readonly P[] }): readonly P[] {
  return s.modelPoles.length > 0 ? s.modelPoles : s.dataPoles;
}

/** Which kind `effectivePoles` returns. */
export function effectivePolesSource(s: { modelPoles: readonly unknown[]; dataPoles: readonly unknown[]; dataPolesKind: "closed-loop" | "disturbance-response" }): PoleSource | null {
  if (s.modelPoles.length > 0) return "model";
  return s.dataPoles.length > 0 ? s.dataPolesKind : null;
}

type PoleLike = Complex & { radius?: number; sdRadius?: number | null };

const radiusOf = (p: PoleLike) => p.radius ?? Math.hypot(p.re, p.im);

/** The pole of largest radius (the spectral radius's pole), or null. */
export function dominantPole<P extends PoleLike>(poles: readonly P[]): P | null {
  let best: P | null = null;
  let rho = -1;
  for (const p of poles) {
    const r = radiusOf(p);
    if (r > rho) {
      rho = r;
      best = p;
    }
  }
  return best;
}

function modeAt(p: Complex, radius: number, angle: number, T: number, sdRadius: number | null): OscillatingMode | null {
  const dr = poleDecayRatio({ re: radius * Math.cos(angle), im: radius * Math.sin(angle) });
  if (dr === null || !Number.isFinite(dr)) return null;
  const lr = Math.log(radius);
  return { re: p.re, im: p.im, radius, angle, decayRatio: dr, zeta: -lr / Math.sqrt(lr * lr + angle * angle), periodS: (2 * Math.PI * T) / angle, sdRadius };
}

const COMPLEX_EPS = 1e-9;

/** The slowest-decaying oscillating mode of `poles` at period T (s), or null when none oscillates. */
export function slowestOscillatingMode(poles: readonly PoleLike[], T: number): OscillatingMode | null {
  let best: OscillatingMode | null = null;
  for (const p of poles) {
    if (!Number.isFinite(p.re) || !Number.isFinite(p.im)) continue;
    const r = Math.hypot(p.re, p.im);
    // complex poles only: a negative real pole rings at the Nyquist frequency, where the
    // per-cycle ratio depends on the sample period (it stays on the map; `unstable` covers it)
    if (r === 0 || Math.abs(p.im) <= COMPLEX_EPS * Math.max(1, r)) continue;
    const m = modeAt(p, r, Math.abs(Math.atan2(p.im, p.re)), T, p.sdRadius ?? null);
    if (m && (!best || m.decayRatio > best.decayRatio)) best = m;
  }
  return best;
}

/**
 * The same mode with its radius moved `sigmas` standard deviations toward the origin, so a poorly
 * determined pole does not count as close to the rim (the alarms' confidence policy).
 */
export function modeWithinConfidence(mode: OscillatingMode, sigmas: number): OscillatingMode | null {
  if (sigmas <= 0 || !mode.sdRadius) return mode;
  const radius = Math.max(0, mode.radius - sigmas * mode.sdRadius);
  return radius === 0 ? null : modeAt(mode, radius, mode.angle, mode.periodS * mode.angle / (2 * Math.PI), mode.sdRadius);
}

const finite = (x: number | null | undefined): number | null => (x === null || x === undefined || !Number.isFinite(x) ? null : x);

/** Reused by `assessPoles` (read before it returns): a state's dominant pole allocates no characteristics object. */
const DOMINANT = poleCharacteristics({ re: 0.5, im: 0 }, 1);

/** The pole figures of an assessment, from the effective poles at period T (s). */
export function assessPoles(
  poles: readonly (PoleLike & Partial<Pick<PoleDto, "sdRadius">>)[],
  T: number,
): Pick<LoopAssessment, "spectralRadius" | "rimDistance" | "radiusSd" | "decayRatio" | "oscillation" | "dominant"> {
  const dom = dominantPole(poles);
  if (!dom || !Number.isFinite(dom.re) || !Number.isFinite(dom.im)) {
    return { spectralRadius: null, rimDistance: null, radiusSd: null, decayRatio: null, oscillation: null, dominant: null };
  }
  const rho = radiusOf(dom);
  const osc = slowestOscillatingMode(poles, T);
  const pc = poleCharacteristicsInto(dom, T, DOMINANT);
  return {
    spectralRadius: finite(rho),
    rimDistance: finite(1 - rho),
    radiusSd: finite(dom.sdRadius),
    decayRatio: osc ? finite(osc.decayRatio) : null,
    oscillation: osc,
    dominant: { zeta: finite(pc.zeta), wn: finite(pc.wn), timeConstant: finite(pc.timeConstant), re: dom.re, im: dom.im },
  };
}

/**
 * Radius that corresponds to a decay-ratio level for a mode at angle theta (rad/sample):
 * DR = r^(2π/|θ|)  =>  r = DR^(|θ|/2π) (docs/domain.md §1). A real mode (θ = 0) has no decay
 * ratio: null.
 */
export function radiusForDecayRatio(decayRatio: number, theta: number): number | null {
  const t = Math.abs(theta);
  if (!(t > 1e-9) || !(decayRatio > 0)) return null;
  return Math.pow(decayRatio, t / (2 * Math.PI));
}

/** Warning and alarm radii of the loop's dominant oscillating mode from period-invariant decay-ratio levels. */
export function gaugeLevels(a: Pick<LoopAssessment, "oscillation" | "dominant">, levels: { low: number; high: number }): { warn: number | null; alarm: number | null } {
  const theta = a.oscillation?.angle ?? (a.dominant?.re != null && a.dominant.im != null ? Math.abs(Math.atan2(a.dominant.im, a.dominant.re)) : null);
  if (theta === null) return { warn: null, alarm: null };
  return { warn: radiusForDecayRatio(levels.low, theta), alarm: radiusForDecayRatio(levels.high, theta) };
}

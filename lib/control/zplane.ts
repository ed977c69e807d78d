/**
 * Mapping between the s-plane and the z-plane (z = e^{sT}) and what a z-plane pole means.
 *
 * Formulas (any digital-control text, e.g. Franklin, Powell & Workman, *Digital Control of Dynamic
 * Systems*, 3rd ed., 1998, ch. 4; Åström & Wittenmark, *Computer-Controlled Systems*, 3rd ed., 1997,
 * ch. 2): for z = r e^{j theta} (principal branch, -pi < theta <= pi)
 *   s = (ln r + j theta) / T,  wn = sqrt(ln(r)^2 + theta^2) / T,  zeta = -ln(r) / sqrt(ln(r)^2 + theta^2),
 *   real pole 0 < z < 1: tau = -T / ln z,  decay ratio of an oscillating pole: r^(2 pi / |theta|).
 * T is the sample period in seconds; wn in rad/s; angles in radians.
 */
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import type { Complex, PoleKind } from "./types";

/** A pole within this distance of z = 1 is classed `integrator`. */
export const INTEGRATOR_TOLERANCE = 1e-6;
/** A pole with modulus below this is classed `origin`. */
export const ORIGIN_TOLERANCE = 1e-12;
/** |Im z| at or below this times max(1, |z|) counts as real. */
export const REAL_AXIS_TOLERANCE = 1e-12;

export interface PoleCharacteristics {
  /** |z| (dimensionless). */
  radius: number;
  /** arg z in radians, (-pi, pi]. */
  angle: number;
  /**
   * Damping ratio from the principal logarithm. Conventions: 1 at the origin (limit along any
   * ray), 0 for an integrator (treated as z = 1 exactly: the stability boundary, where s = 0 has
   * no damping of its own; wn is then 0 too), -1 on the real axis beyond 1, negative outside
   * the unit circle. For a negative-real pole it is computed with theta = pi and has no
   * continuous-time meaning (see `continuousEquivalent`).
   */
  zeta: number;
  /** Natural frequency |s| in rad/s (Infinity at the origin, 0 at z = 1). */
  wn: number;
  /** -T / ln z in seconds for a real pole 0 <= z < 1 (0 at the origin); null otherwise (integrator, unstable, negative or complex). */
  timeConstant: number | null;
  /** Amplitude ratio of successive peaks, r^(2 pi/|theta|), for complex and negative-real poles; null otherwise. */
  decayRatio: number | null;
  /** Location class (stability is the separate `stable` flag). */
  kind: PoleKind;
  /** |z| < 1 strictly (an integrator at z = 1 is not stable). */
  stable: boolean;
  /**
   * False for a negative-real pole (it rings at the Nyquist frequency, period 2T: no continuous
   * pole with the same sample period maps onto it) and for the origin (s = -infinity);
   * zeta and wn are then formal values from the principal logarithm.
   */
  continuousEquivalent: boolean;
}

function assertFiniteComplex(z: Complex, what: string): void {
  if (!Number.isFinite(z.re) || !Number.isFinite(z.im)) throw new NonFiniteInputError(what);
}

function assertPeriod(T: number): void {
  if (!Number.isFinite(T)) throw new NonFiniteInputError("sample period T");
  if (!(T > 0)) throw new ControlArgumentError(`sample period T must be > 0 s (got ${T})`);
}

/**
 * s = ln(z) / T on the principal branch (arg z in (-pi, pi]); T in seconds, s in 1/s.
 * z = 0 maps to s = -Infinity (real part). Within |z - 1| < 0.5 the real part is
 * 0.5 log1p(|z|^2 - 1) / T with |z|^2 - 1 formed from w = z - 1, so it keeps full relative
 * accuracy for poles very close to z = 1 (fast sampling).
 */
export function zToS(z: Complex, T: number): Complex {
  assertFiniteComplex(z, "z");
  assertPeriod(T);
  const w = z.re - 1; // exact for z.re in [0.5, 2] (Sterbenz)
  if (w * w + z.im * z.im < 0.25) {
    // near z = 1: ln|z| = 0.5 log1p(|z|^2 - 1) with |z|^2 - 1 = w (2 + w) + y^2 formed without the
    // cancellation of |z| - 1 (Higham 2002 sec. 1.14 on log1p; common practice)
    return { re: (0.5 * Math.log1p(w * (2 + w) + z.im * z.im)) / T, im: Math.atan2(z.im, z.re) / T };
  }
  const r = Math.sqrt(z.re * z.re + z.im * z.im);
  return { re: Math.log(r) / T, im: Math.atan2(z.im, z.re) / T };
}

/** z = e^{sT}; T in seconds, s in 1/s. */
export function sToZ(s: Complex, T: number): Complex {
  assertFiniteComplex(s, "s");
  assertPeriod(T);
  const m = Math.exp(s.re * T);
  return { re: m * Math.cos(s.im * T), im: m * Math.sin(s.im * T) };
}

/**
 * Decay ratio r^(2 pi / |theta|) of an oscillating pole z = r e^{j theta}: the amplitude ratio of
 * successive peaks of its mode; independent of the sample period; 1 on the unit circle, > 1
 * outside. Returns null for a pole on the non-negative real axis (no oscillation, including the
 * origin and z = 1). A negative-real pole gives r^2 (period 2T).
 */
export function decayRatio(z: Complex): number | null {
  assertFiniteComplex(z, "z");
  const r = Math.sqrt(z.re * z.re + z.im * z.im);
  if (r === 0) return null;
  if (Math.abs(z.im) <= REAL_AXIS_TOLERANCE * Math.max(1, r) && z.re > 0) return null;
  const theta = Math.abs(Math.atan2(z.im, z.re));
  if (theta === 0) return null;
  return Math.pow(r, (2 * Math.PI) / theta);
}

/** Location class of a pole (tolerances: INTEGRATOR_TOLERANCE, ORIGIN_TOLERANCE, REAL_AXIS_TOLERANCE). */
export function poleKind(z: Complex): PoleKind {
  return kindOf(z, Math.sqrt(z.re * z.re + z.im * z.im));
}

function kindOf(z: Complex, r: number): PoleKind {
  return kindXY(z.re, z.im, r);
}

function kindXY(x: number, y: number, r: number): PoleKind {
  if (r <= ORIGIN_TOLERANCE) return "origin";
  if ((x - 1) * (x - 1) + y * y <= INTEGRATOR_TOLERANCE * INTEGRATOR_TOLERANCE) return "integrator";
  if (Math.abs(y) > REAL_AXIS_TOLERANCE * Math.max(1, r)) return "complex";
  return x > 0 ? "positive-real" : "negative-real";
}

/**
 * What a discrete pole z means at sample period T (seconds): radius, angle, damping ratio zeta,
 * natural frequency wn (rad/s), time constant (s), decay ratio, location class and stability.
 * See `PoleCharacteristics` for the conventions at the origin, at z = 1 and on the negative real axis.
 */
export function poleCharacteristics(z: Complex, T: number): PoleCharacteristics {
  return poleCharacteristicsInto(z, T, { radius: 0, angle: 0, zeta: 0, wn: 0, timeConstant: null, decayRatio: null, kind: "origin", stable: true, continuousEquivalent: false });
}

/**
 * `poleCharacteristics` written into a caller-owned object `out` (every field overwritten, the
 * same values bit for bit) and returned: no allocation per call, for a hot path that reuses one
 * object (the tracker's state, lib/domain/assessment.ts; the control bench).
 */
export function poleCharacteristicsInto(z: Complex, T: number, out: PoleCharacteristics): PoleCharacteristics {
  assertFiniteComplex(z, "pole");
  assertPeriod(T);
  const radius = Math.sqrt(z.re * z.re + z.im * z.im);
  // atan2 only off the real axis (the hot path mostly sees real poles too); pi for the negative axis
  const angle = z.im === 0 ? (z.re < 0 ? Math.PI : 0) : Math.atan2(z.im, z.re);
  const kind = kindOf(z, radius);
  out.radius = radius;
  out.angle = angle;
  out.kind = kind;
  out.stable = radius < 1;
  if (kind === "origin") {
    out.zeta = 1;
    out.wn = Infinity;
    out.timeConstant = 0;
    out.decayRatio = null;
    out.continuousEquivalent = false;
    return out;
  }
  if (kind === "integrator") {
    out.zeta = 0;
    out.wn = 0;
    out.timeConstant = null;
    out.decayRatio = null;
    out.continuousEquivalent = true;
    return out;
  }
  const lnr = Math.log(radius);
  const theta = kind === "positive-real" ? 0 : kind === "negative-real" ? Math.PI : angle;
  const mag = Math.sqrt(lnr * lnr + theta * theta);
  out.wn = mag / T;
  out.zeta = mag === 0 ? 0 : -lnr / mag;
  // -T / ln z (z real: ln z = ln r)
  out.timeConstant = kind === "positive-real" && radius < 1 ? -T / lnr : null;
  // r^(2 pi/|theta|) = exp(2 pi ln r / |theta|), reusing ln r
  out.decayRatio = kind === "complex" || kind === "negative-real" ? Math.exp((2 * Math.PI * lnr) / Math.abs(theta)) : null;
  out.continuousEquivalent = kind !== "negative-real";
  return out;
}

function assertPoints(points: number): void {
  if (!Number.isInteger(points) || points < 2) {
    throw new ControlArgumentError(`points must be an integer >= 2 (got ${points})`);
  }
}

/**
 * Constant-damping locus in the upper half z-plane: z(w) = exp(wT(-zeta + j sqrt(1 - zeta^2)))
 * for wT sqrt(1 - zeta^2) from 0 to pi (a logarithmic spiral from z = 1; zeta = 0 gives the
 * upper unit semicircle). `points` >= 2 evenly spaced in angle, first z = 1, last on the
 * negative real axis.
 * @throws ControlArgumentError unless 0 <= zeta < 1.
 */
export function dampingLocus(zeta: number, points: number): Complex[] {
  if (!Number.isFinite(zeta)) throw new NonFiniteInputError("zeta");
  if (!(zeta >= 0 && zeta < 1)) throw new ControlArgumentError(`dampingLocus needs 0 <= zeta < 1 (got ${zeta})`);
  assertPoints(points);
  const slope = zeta / Math.sqrt(1 - zeta * zeta); // decay per radian of angle
  const out: Complex[] = [];
  for (let i = 0; i < points; i++) {
    const theta = (Math.PI * i) / (points - 1);
    const r = Math.exp(-slope * theta);
    out.push({ re: r * Math.cos(theta), im: r * Math.sin(theta) });
  }
  return out;
}

/**
 * Constant natural-frequency locus in the upper half z-plane: z(zeta) = exp(wnT(-zeta + j sqrt(1 - zeta^2)))
 * for zeta from 0 (on the unit circle, angle wnT) to 1 (on the real axis, z = e^{-wnT}); `points` >= 2.
 * @param wnT natural frequency times sample period (radians), 0 < wnT <= pi.
 * @throws ControlArgumentError outside that range.
 */
export function naturalFrequencyLocus(wnT: number, points: number): Complex[] {
  if (!Number.isFinite(wnT)) throw new NonFiniteInputError("wnT");
  if (!(wnT > 0 && wnT <= Math.PI)) {
    throw new ControlArgumentError(`naturalFrequencyLocus needs 0 < wnT <= pi (got ${wnT})`);
  }
  assertPoints(points);
  const out: Complex[] = [];
  for (let i = 0; i < points; i++) {
    const zeta = i / (points - 1);
    const r = Math.exp(-wnT * zeta);
    const theta = wnT * Math.sqrt(1 - zeta * zeta);
    out.push({ re: r * Math.cos(theta), im: r * Math.sin(theta) });
  }
  return out;
}

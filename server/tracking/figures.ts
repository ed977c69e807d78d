/**
 * A tracker state's figures from its models (docs/domain.md §1-§3): the model-based closed-loop
 * poles with their confidence and conditioning bounds, the radius-to-1
 * forecast, and the judgement whether a radius beyond the circle is evidence at all.
 */
import { closedLoopCoefficientCovariance, poleConfidence } from "@/lib/control/confidence";
import { forecastCrossing, type TrendPoint } from "@/lib/control/forecast";
import { juryTest } from "@/lib/control/jury";
import { polyMul, qToZ, stripLeadingZeros } from "@/lib/control/poly";
import { polyRootsWithBounds } from "@/lib/control/root-bounds";
import { polyRoots } from "@/lib/control/roots";
import type { ArxModel, Complex, QTf } from "@/lib/control/types";
import type { Crossing } from "@/lib/domain/assessment";
import type { LoopStateDto, PoleDto } from "@/lib/domain/types";
import { closedLoopRoots } from "./pole-roots";

/** Estimator memories by which the rim forecast moves the radius history back (docs/domain.md §7). */
export const RADIUS_DELAY_MEMORIES = 0.5;

export function finite(x: number | null | undefined): number | null {
  return x !== null && x !== undefined && Number.isFinite(x) ? x : null;
}

export function modulus(z: Complex): number {
  return Math.hypot(z.re, z.im);
}

export function fmt(v: number | null): string {
  if (v === null) return "?";
  return Math.abs(v) >= 1000 || Number.isInteger(v) ? String(Math.round(v * 100) / 100) : v.toPrecision(4);
}

export function toPoleDto(z: Complex, c: { radiusStd: number; covariance: [[number, number], [number, number]] } | undefined, bound?: number): PoleDto {
  const sd = c ? finite(c.radiusStd) : null;
  const cov = c ? ([c.covariance[0][0], c.covariance[0][1], c.covariance[1][1]] as [number, number, number]) : null;
  return { re: z.re, im: z.im, radius: modulus(z), sdRadius: sd, cov: cov && cov.every(Number.isFinite) ? cov : null, bound: bound !== undefined && Number.isFinite(bound) ? bound : null };
}

/**
 * The model-based figures of a state. `misfit` (radius units; a reduced-order plant only, see
 * ./plant-choice.ts `reducedOrderMisfit`) widens the dominant pole's sd and ellipse by the radius
 * bias the missing pole may cause: sd^2 + misfit^2; null claims no interval for that pole.
 */
export function fillModelFigures(st: LoopStateDto, model: ArxModel, cov: number[][], controller: QTf, headroom: () => number | null, misfit?: number | null): void {
  try {
    const { char, roots } = closedLoopRoots(model, controller);
    if (roots.some((z) => !Number.isFinite(z.re) || !Number.isFinite(z.im))) return;
    let conf: ReturnType<typeof poleConfidence> | null = null;
    try {
      const cc = closedLoopCoefficientCovariance(model, controller, cov);
      conf = cc.coeffs.length === char.length ? poleConfidence(char, cc.covariance, { roots }) : null;
    } catch {
      conf = null;
    }
    st.characteristic = char.every(Number.isFinite) ? char : null;
    const bounded = polyRootsWithBounds(char, { roots });
    st.modelPoles = roots.map((z, i) => toPoleDto(z, conf?.[i], bounded[i]?.bound));
    if (misfit !== undefined) widenDominant(st.modelPoles, misfit);
    st.juryStable = juryTest(char).stable;
    st.gainHeadroom = headroom();
    const num = stripLeadingZeros(polyMul(qToZ(model.b), qToZ(controller.num)));
    st.zeros = num.length > 1 && num.every(Number.isFinite) ? polyRoots(num).filter((z) => Number.isFinite(z.re) && Number.isFinite(z.im)) : [];
  } catch {
    // a degenerate model (e.g. all-zero b): keep the state without model-based figures
    st.modelPoles = [];
    st.gainHeadroom = null;
    st.juryStable = null;
    st.characteristic = null;
    st.zeros = [];
  }
}

/** The dominant pole's sd and (Re, Im) covariance widened by `misfit` (null: removed). */
function widenDominant(poles: PoleDto[], misfit: number | null): void {
  let k = -1;
  poles.forEach((p, i) => {
    if (k < 0 || p.radius > poles[k]!.radius) k = i;
  });
  const p = poles[k];
  if (!p) return;
  if (misfit === null) {
    poles[k] = { ...p, sdRadius: null, cov: null };
    return;
  }
  const m2 = misfit * misfit;
  poles[k] = { ...p, sdRadius: p.sdRadius === null ? null : Math.sqrt(p.sdRadius * p.sdRadius + m2), cov: p.cov ? [p.cov[0] + m2, p.cov[1], p.cov[2] + m2] : null };
}

/**
 * When the spectral-radius trend reaches the unit circle (docs/domain.md §7): each radius weighted
 * by its own delta-method sd (when it has one), and moved back by half an estimator memory
 * (RADIUS_DELAY_MEMORIES, chosen by measurement there: the estimate lags a drifting radius by about
 * one memory, a gain creep's radius bends the other way).
 */
export function forecastRadiusOne(history: readonly TrendPoint[], memoryS: number): Crossing | null {
  try {
    const f = forecastCrossing(history, 1, { memory: memoryS, delay: RADIUS_DELAY_MEMORIES * memoryS });
    if (!f || !Number.isFinite(f.at) || !Number.isFinite(f.low) || !Number.isFinite(f.high)) return null;
    return { at: Math.round(f.at * 1000), low: Math.round(f.low * 1000), high: Math.round(f.high * 1000) };
  } catch {
    return null;
  }
}

/** A radius history point: the radius, and its sd when the delta method gave a usable one. */
export function radiusPoint(t: number, radius: number, sd: number | null): TrendPoint {
  return sd !== null && Number.isFinite(sd) && sd > 0 ? { t, value: radius, sd } : { t, value: radius };
}

/**
 * A radius at or beyond 1 whose own 95 % interval (delta method, `radiusSd`) reaches back inside
 * the circle is no evidence of instability: the estimate is then ill-determined, as when an
 * unmeasured periodic load drives the equation error (seen under a 40 s load cycle: radii
 * 1.01-1.41 with sd 2.5-3.7 on stable loops). Such a state is `poor-fit` ("undecided near the
 * rim", alarms held) rather than `tracking` with an unstable verdict. A radius inside the circle
 * keeps its verdict; a well-determined radius beyond it stays an alarm.
 */
export function rimDoubt(st: LoopStateDto): string | null {
  const r = st.spectralRadius;
  if (r === null || r < 1) return null;
  const sd = st.radiusSd;
  if (sd !== null && Number.isFinite(sd) && r - 1.959964 * sd >= 1) return null;
  const spread = sd !== null && Number.isFinite(sd) ? ` ± ${fmt(1.959964 * sd)}` : " (no interval)";
  return `radius ${fmt(r)}${spread} spans the unit circle: undecided near the rim, figures not trusted (an unmeasured periodic load or too little excitation?)`;
}

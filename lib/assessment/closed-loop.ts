/**
 * Closed-loop dynamics from the export, two ways that must not be confused:
 *
 * - The loop's own closed-loop poles: only when the data excite the loop (set-point moves in
 *   closed loop, or output moves in manual), since a plant under feedback at constant set point
 *   is not identifiable from routine data (Ljung, System Identification, 2nd ed., 1999, sec.
 *   13.4). The plant MV -> PV (% of span) is fitted as an ARX model by batch least squares
 *   (lib/control fitArx, structure by FPE), and the closed-loop polynomial formed with the
 *   configured PID re-discretised at the same period (closedLoopPolynomial).
 * - The disturbance response: a high-order AR model of the control error over constant-SP
 *   stretches (Yule–Walker / Levinson, order by AIC; Box, Jenkins & Reinsel). Its poles describe
 *   how the closed loop answers its disturbances as seen in routine data, mixed with the
 *   disturbance's own colour; reported separately with that caveat, never as the loop's poles.
 *
 * Both are given at the loop's sample period (z^(samplePeriodS / T_est)).
 */
import { closedLoopPolynomial, discretePid, fitArx, polyRoots, type Complex } from "@/lib/control";
import type { LoopConfig } from "./config";
import { integralTime } from "./config";
import { levinson } from "./signal";
import type { AssessWindow } from "./window";
import { isClosed } from "./window";
import { slowestOscillatingMode } from "@/lib/domain/assessment";

export interface OwnPoles {
  poles: Complex[];
  spectralRadius: number;
  decayRatio: number | null;
  fitPercent: number;
  estimationPeriodS: number;
}

const MAX_FIT_SAMPLES = 20_000;

/** Maps poles from T1 to T2; a negative-real pole has no equivalent at another period and is dropped. */
export function mapPoles(
  poles: Complex[],
  T1: number,
  T2: number,
): { poles: Complex[]; dropped: number } {
  const ratio = T2 / T1;
  if (Math.abs(ratio - 1) < 1e-9) return { poles, dropped: 0 };
  const out: Complex[] = [];
  let dropped = 0;
  for (const z of poles) {
    const r = Math.hypot(z.re, z.im);
    if (r === 0) {
      out.push({ re: 0, im: 0 });
      continue;
    }
    const th = Math.atan2(z.im, z.re);
    if (z.im === 0 && z.re < 0) {
      dropped++;
      continue;
    }
    const m = Math.pow(r, ratio);
    out.push({ re: m * Math.cos(th * ratio), im: m * Math.sin(th * ratio) });
  }
  return { poles: out, dropped };
}

export function radiusOf(poles: readonly Complex[]): number | null {
  let r = -1;
  for (const p of poles) r = Math.max(r, Math.hypot(p.re, p.im));
  return r >= 0 ? r : null;
}

/**
 * Decay ratio of the slowest-decaying oscillating mode (max over complex poles of
 * |z|^(2π/|arg z|)), the product's one definition (lib/domain/assessment.ts); null if none.
 */
export function dominantDecayRatio(poles: readonly Complex[]): number | null {
  return slowestOscillatingMode(poles, 1)?.decayRatio ?? null;
}

/** Block averages of x over d samples (anti-alias before decimation), only over fully included blocks. */
export function decimate(x: Float64Array, d: number): Float64Array {
  const m = Math.floor(x.length / d);
  const out = new Float64Array(m);
  for (let i = 0; i < m; i++) {
    let s = 0;
    for (let j = 0; j < d; j++) s += x[i * d + j]!;
    out[i] = s / d;
  }
  return out;
}

/** Decimation factor so that the loop's time scale spans about 15 estimation periods. */
export function estimationFactor(w: AssessWindow, config: LoopConfig): number {
  const scale = Math.max(integralTime(config) ?? 0, 2 * (config.deadTimeS ?? 0));
  return Math.max(1, Math.floor(scale / (15 * w.T)));
}

/** Counts excitation: set-point moves (closed loop) and output moves in manual, each above `threshold`. */
export function countExcitation(
  w: AssessWindow,
  spThreshold: number,
  mvThreshold: number,
): { spMoves: number; manualMoves: number } {
  let spMoves = 0;
  let manualMoves = 0;
  let anchorSp = w.sp[0] ?? 0;
  let anchorMv = w.mv[0] ?? 0;
  for (let i = 1; i < w.n; i++) {
    if (!w.good[i]) continue;
    if (Math.abs(w.sp[i]! - anchorSp) > spThreshold) {
      if (isClosed(w, i)) spMoves++;
      anchorSp = w.sp[i]!;
    }
    if (!isClosed(w, i)) {
      if (Math.abs(w.mv[i]! - anchorMv) > mvThreshold) {
        manualMoves++;
        anchorMv = w.mv[i]!;
      }
    } else anchorMv = w.mv[i]!;
  }
  return { spMoves, manualMoves };
}

/** The loop's own closed-loop poles from excited data, or null when the data do not excite the loop. */
export function ownClosedLoopPoles(
  w: AssessWindow,
  config: LoopConfig,
  dLoop: number,
): OwnPoles | null {
  // At most MAX_FIT_SAMPLES equations per candidate structure (cost bound for long exports).
  const d = Math.max(dLoop, Math.ceil(w.n / MAX_FIT_SAMPLES));
  const Test = w.T * d;
  const u = decimate(w.mv, d);
  const y = decimate(w.pvPct, d);
  if (u.length < 60) return null;
  const nkFixed =
    config.deadTimeS !== null && config.deadTimeS !== undefined
      ? Math.floor(config.deadTimeS / Test) + 1
      : null;
  const nks = nkFixed !== null ? [nkFixed] : [1, 2, 4, 7].filter((k) => k < u.length / 10);
  try {
    const fit = fitArx(u, y, { T: Test, na: [1, 2], nb: [2], nk: nks });
    if (!(fit.fit > 20)) return null;
    const c = config.controller;
    const ti = integralTime(config);
    const pid = discretePid({
      kp: c.kp,
      ...(ti !== null ? { ti } : {}),
      td: c.td ?? 0,
      ...(c.derivativeFilterS ? { tf: c.derivativeFilterS } : {}),
      T: Test,
      action: c.action,
      form: c.form,
    });
    const poly = closedLoopPolynomial(fit.model, pid);
    const raw = polyRoots(poly);
    const { poles } = mapPoles(raw, Test, config.samplePeriodS);
    const spectralRadius = radiusOf(poles);
    if (spectralRadius === null) return null;
    return {
      poles,
      spectralRadius,
      decayRatio: dominantDecayRatio(poles),
      fitPercent: fit.fit,
      estimationPeriodS: Test,
    };
  } catch {
    return null;
  }
}

export interface DisturbanceModel {
  poles: Complex[];
  spectralRadius: number | null;
  decayRatio: number | null;
  order: number;
  droppedNegativeReal: number;
}

/** AR model of the control error over constant-SP stretches (order 1..maxOrder by AIC), poles at samplePeriodS. */
export function disturbanceResponse(
  e: Float64Array,
  stretches: readonly [number, number][],
  T: number,
  samplePeriodS: number,
  d: number,
  maxOrder = 10,
): DisturbanceModel | null {
  // Decimate each stretch by block averages, then pool autocovariances within stretches. The
  // factor comes from the loop's time scale (its integral time); a sluggish loop's long integral
  // time would leave too few blocks for a model, so it is lowered until the stretches give at
  // least 40 blocks per AR coefficient (ours).
  let stretched = 0;
  for (const [s, t] of stretches) stretched += t - s;
  d = Math.max(1, Math.min(d, Math.floor(stretched / (40 * maxOrder))));
  const segs: Float64Array[] = [];
  let total = 0;
  for (const [s, t] of stretches) {
    const seg = decimate(e.subarray(s, t), d);
    if (seg.length < 3 * maxOrder) continue;
    let m = 0;
    for (let i = 0; i < seg.length; i++) m += seg[i]!;
    m /= seg.length;
    for (let i = 0; i < seg.length; i++) seg[i] = seg[i]! - m;
    segs.push(seg);
    total += seg.length;
  }
  if (total < 20 * maxOrder) return null;
  const c = new Float64Array(maxOrder + 1);
  for (const seg of segs)
    for (let k = 0; k <= maxOrder; k++) {
      let acc = 0;
      for (let i = k; i < seg.length; i++) acc += seg[i]! * seg[i - k]!;
      c[k] = c[k]! + acc;
    }
  for (let k = 0; k <= maxOrder; k++) c[k] = c[k]! / total;
  if (!(c[0]! > 0)) return null;
  let bestP = 1;
  let bestAic = Infinity;
  let bestA: Float64Array | null = null;
  for (let p = 1; p <= maxOrder; p++) {
    const { a, errorVariance } = levinson(c, p);
    const v = errorVariance[p]!;
    if (!(v > 0)) break;
    const aic = total * Math.log(v) + 2 * p;
    if (aic < bestAic) {
      bestAic = aic;
      bestP = p;
      bestA = a;
    }
  }
  if (!bestA) return null;
  const raw = polyRoots([1, ...bestA]);
  const { poles, dropped } = mapPoles(raw, T * d, samplePeriodS);
  return {
    poles,
    spectralRadius: radiusOf(poles),
    decayRatio: dominantDecayRatio(poles),
    order: bestP,
    droppedNegativeReal: dropped,
  };
}

/**
 * Time constant of the slowest disturbance-response pole, s: τ = −T / ln r for the pole radius r
 * at period T (the zero-order-hold map z = e^{sT}, common practice). How long the closed loop
 * takes to remove what disturbs it in routine operation; mixed with the disturbance's own colour
 * (see `disturbanceResponse`), null without a stable pole.
 */
export function disturbanceTimeConstantS(model: DisturbanceModel | null, samplePeriodS: number): number | null {
  const r = model?.spectralRadius ?? null;
  if (r === null || !(r > 0) || !(r < 1)) return null;
  return -samplePeriodS / Math.log(r);
}

/**
 * The forecast rules compared on the recorded drift streams (./drift-shape.ts; docs/domain.md §7,
 * "The drift's shape"), each from the same samples at half way:
 * - `tracker`: the tracker's own forecast, replayed (the tangent of the radius under the linear
 *   drift, the rates of A restricted to zero; lib/control/drift-crossing.ts);
 * - `linear`: the same rule on the batch fit (the tool's check against the replay);
 * - `quadratic`: the tangent from the quadratic drift's rate at the last sample;
 * - `test 1 %`: the quadratic only when the Wald test of its curvature (B's, after the restriction
 *   of A's rate and curvature) rejects zero at 1 %, else the linear (a pre-test estimator);
 * - `Akaike average`: the two forecasts weighted by their Akaike weights, w_i proportional to
 *   exp(-AIC_i / 2), with AIC_Q - AIC_L taken as 2 nb - Wald (the Wald statistic standing in for
 *   the likelihood ratio of the nested pair), the interval from the unconditional standard error
 *   sum_i w_i sqrt(var_i + (x_i - x_avg)^2) (Burnham & Anderson, *Model Selection and Multimodel
 *   Inference*, 2nd ed., 2002, secs. 2.9 and 4.3; Buckland, Burnham & Augustin, *Biometrics* 53,
 *   1997; from memory);
 * - `path`: where the radius along the linear theta(t) reaches 1 (no interval);
 * - `tangent/path by weight`: the tangent with the quadratic's Akaike weight (evidence that the
 *   gain accelerates), the path with the linear's;
 * - `window W`: the linear rule on the last W seconds only.
 */
import { normalQuantile } from "@/lib/control/confidence";
import { chiSquareQuantile, driftCrossing, pathCrossing, polyDriftFit, replayTracker, restrictZero, tangentEstimate, type DriftStream, type Forecast, type PolyDriftFit, T0 } from "./drift-shape";

export const SHORTER_WINDOWS_S = [15000, 12000, 9000];

export interface ShapeForecasts {
  rules: Record<string, Forecast>;
  /** Signed z of B's curvature (sqrt of its Wald statistic with the sign of the first coefficient); NaN: no quadratic fit. */
  curvatureZ: number;
  /** The batch linear rule's forecast less the replayed tracker's, seconds (NaN unless both forecast). */
  linearLessTracker: number;
  trackerAgrees: boolean;
}

const Q = normalQuantile(0.975);

/** The fit with the drift of A (rate and curvature) restricted to zero unless the Wald test rejects at 1 % (as the tracker). */
export function gainDrift(f: PolyDriftFit, na: number): PolyDriftFit {
  const idx: number[] = [];
  for (let k = 1; k <= f.degree; k++) for (let i = 0; i < na; i++) idx.push(k * f.d + i);
  const r = restrictZero(f, idx);
  return r.wald <= chiSquareQuantile(0.99, idx.length) ? r.fit : f;
}

/** The tangent rule (the tracker's) on a batch fit, seconds of simulated time. */
export function tangent(f: PolyDriftFit | null, s: DriftStream): Forecast {
  if (!f) return null;
  const c = driftCrossing(tangentEstimate(f), s.o, s.o.controller);
  return c ? { at: c.at - T0, low: c.low - T0, high: c.high - T0 } : null;
}

/** Every rule's forecast for one stream (module doc). */
export function shapeForecasts(s: DriftStream): ShapeForecasts {
  const { forecast: replay, noiseA } = replayTracker(s);
  const o = s.o;
  const span = (f: PolyDriftFit | null, need = 10 * o.memoryS) => (f && f.tLast - f.tFirst >= need ? f : null);
  const f1 = span(polyDriftFit(s, 1, noiseA));
  const f2 = span(polyDriftFit(s, 2, noiseA));
  const L = f1 ? gainDrift(f1, o.na) : null;
  const Qf = f2 ? gainDrift(f2, o.na) : null;
  const lin = tangent(L, s);
  const quad = tangent(Qf, s);
  let curvatureZ = NaN, wQ = 0;
  if (Qf) {
    const idxB = Array.from({ length: o.nb }, (_, j) => 2 * Qf.d + o.na + j);
    const wald = restrictZero(Qf, idxB).wald;
    curvatureZ = Math.sign(Qf.x[idxB[0]!]!) * Math.sqrt(wald);
    wQ = 1 / (1 + Math.exp((2 * o.nb - wald) / 2));
  }
  const test = Qf && curvatureZ ** 2 > chiSquareQuantile(0.99, o.nb) ? quad : lin;
  const rules: Record<string, Forecast> = { tracker: replay, linear: lin, quadratic: quad, "test 1 %": test, "Akaike average": average(lin, quad, wQ) };
  const path = L ? pathCrossing(L, o, 10 * (L.tLast - L.tFirst)) : null;
  const pathF = L && path !== null ? { at: L.tLast + path - T0, low: NaN, high: NaN } : null;
  rules.path = pathF;
  rules["tangent/path by weight"] = lin && pathF ? { at: wQ * lin.at + (1 - wQ) * pathF.at, low: NaN, high: NaN } : null;
  for (const w of SHORTER_WINDOWS_S) {
    const f = span(polyDriftFit(s, 1, noiseA, w), Math.min(10 * o.memoryS, w - 2 * o.memoryS));
    rules[`window ${w / 1000} ks`] = tangent(f ? gainDrift(f, o.na) : null, s);
  }
  const near = (a: Forecast, b: Forecast) => (a === null) === (b === null) && (!a || Math.abs(a.at - b!.at) < 1);
  return { rules, curvatureZ, linearLessTracker: lin && replay ? lin.at - replay.at : NaN, trackerAgrees: near(replay, s.tracker) };
}

/** Akaike-weight average of two forecasts (module doc); one alone when the other is none. */
export function average(a: Forecast, b: Forecast, wB: number): Forecast {
  if (!a || !b) return wB > 0.5 ? b : a;
  const at = (1 - wB) * a.at + wB * b.at;
  const sd = (f: NonNullable<Forecast>) => (f.high - f.low) / (2 * Q);
  const u = (1 - wB) * Math.sqrt(sd(a) ** 2 + (a.at - at) ** 2) + wB * Math.sqrt(sd(b) ** 2 + (b.at - at) ** 2);
  return { at, low: at - Q * u, high: at + Q * u };
}

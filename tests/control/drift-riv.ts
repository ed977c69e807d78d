/**
 * Refined instrumental variables in the batch drift fit (issue #10, item 3; docs/domain.md §7, "A
 * refined IV with the system's denominator"). An offline tool, not the product: on the samples the
 * tracker's drift fit took (./drift-shape.ts), the linear drift fit of ./drift-shape.ts with the
 * prefilter of Young's refined IV for a model A(q) y = B(q) u + C(q)/D(q) e,
 *   F(q) = D(q) / (C(q) A(q)),   here C = 1 and D an AR(order) of the 1/A-filtered equation error,
 * applied to y, every regressor column [phi, tau phi] and every instrument column [z, tau z] alike,
 * and iterated: estimate, refilter, re-estimate (Young, *Automatica* 12, 1976; Young, *Recursive
 * Estimation and Time-Series Analysis*, 2nd ed., 2011, ch. 7; Söderström & Stoica, *System
 * Identification*, 1989, ch. 8, the optimal IV prefilter is the inverse noise filter of the
 * equation error; all from memory). The tracker's noise model (lib/control/drift-noise.ts) is the
 * AR part alone, fitted to the equation error A(q) v, whose MA factor A(q) an AR model can only
 * approximate; dividing by A first leaves the AR model the noise's own filter. `aFilter: false`
 * is the same iteration without 1/A (the AR part refitted to the batch residuals), `order: 0` the
 * 1/A prefilter alone (the simplified RIV, white output noise). Filtering does not change the
 * parameters (the equation holds for every linear filter applied to all columns alike, zero
 * initial conditions at every gap included), so every variant is consistent; they differ in
 * efficiency only.
 */
import { levinsonDurbin } from "@/lib/control/drift-noise";
import { polyDriftFit, polyIv, timePowers, visit, type DriftStream, type PolyDriftFit, type PolyRow } from "./drift-shape";
import { gainDrift } from "./drift-shape-rules";

export interface RivOptions {
  /** AR order of D (0: none). */
  order: number;
  /** Divide by the estimated A(q) first. */
  aFilter: boolean;
  /** Estimate-filter rounds after the start (the tracker-like batch fit with its final noise model). */
  iterations: number;
}

interface Series { Phi: Float64Array[]; Z: Float64Array[]; y: number[]; t: number[]; inf: boolean[]; run: number[] }

/** The stream after its last reset, every column through 1/A(q) (a = a_1..a_na; empty: none), zero initial conditions per run. */
function divided(s: DriftStream, a: ArrayLike<number>): Series {
  const out: Series = { Phi: [], Z: [], y: [], t: [], inf: [], run: [] };
  const tLast = s.t[s.t.length - 1]!;
  let run = 0;
  let start = 0;
  visit(s, {
    reset: () => {
      for (const k of Object.keys(out) as (keyof Series)[]) out[k].length = 0;
      run++;
      start = 0;
    },
    gap: () => {
      run++;
      start = out.y.length;
    },
    add: (t, phi, z, y, inf) => {
      const tau = (t - tLast) / s.o.windowS;
      const P = timePowers(phi, tau, 1), Z = timePowers(z, tau, 1);
      const k = out.y.length;
      for (let i = 1; i <= a.length && k - i >= start; i++) {
        const c = a[i - 1]!;
        y -= c * out.y[k - i]!;
        for (let j = 0; j < P.length; j++) {
          P[j]! -= c * out.Phi[k - i]![j]!;
          Z[j]! -= c * out.Z[k - i]![j]!;
        }
      }
      out.Phi.push(P);
      out.Z.push(Z);
      out.y.push(y);
      out.t.push(t);
      out.inf.push(inf);
      out.run.push(run);
    },
  });
  return out;
}

/** AR(order) of the series' residuals at x over the window (autocovariances within runs; Levinson–Durbin). */
function arOfResiduals(S: Series, x: Float64Array, order: number, from: number): Float64Array | null {
  const e = S.y.map((y, k) => y - S.Phi[k]!.reduce((acc, v, j) => acc + v * x[j]!, 0));
  const r = new Float64Array(order + 1);
  for (let l = 0; l <= order; l++) {
    let m = 0;
    for (let k = l; k < e.length; k++) {
      if (S.t[k]! < from || S.run[k] !== S.run[k - l]) continue;
      r[l]! += e[k]! * e[k - l]!;
      m++;
    }
    r[l] = m ? r[l]! / m : 0;
  }
  return levinsonDurbin(r, order);
}

/** The informative rows in the window, through the FIR D(q) = 1 + d_1 q^-1 + ... within runs (rows without a full history dropped, as polyDriftFit). */
function rowsOf(S: Series, dAr: ArrayLike<number>, from: number): PolyRow[] {
  const rows: PolyRow[] = [];
  const n = dAr.length;
  for (let k = n; k < S.y.length; k++) {
    if (!S.inf[k] || S.t[k]! < from || S.run[k - n] !== S.run[k]) continue;
    const Phi = Float64Array.from(S.Phi[k]!), Z = Float64Array.from(S.Z[k]!);
    let y = S.y[k]!;
    for (let l = 1; l <= n; l++) {
      const c = dAr[l - 1]!;
      y += c * S.y[k - l]!;
      for (let j = 0; j < Phi.length; j++) {
        Phi[j]! += c * S.Phi[k - l]![j]!;
        Z[j]! += c * S.Z[k - l]![j]!;
      }
    }
    rows.push({ Phi, Z, y, run: S.run[k]! });
  }
  return rows;
}

/**
 * The refined-IV linear drift fit of the stream (module doc), with the drift of A restricted to
 * zero as the tracker's (unless its Wald test rejects), or null when a fit fails. `start` is the
 * tracker-like batch fit (its final noise model over the window) the iteration begins from.
 */
export function rivDriftFit(s: DriftStream, start: PolyDriftFit, o: RivOptions): PolyDriftFit | null {
  const { na, windowS } = s.o;
  const tLast = s.t[s.t.length - 1]!;
  const from = tLast - windowS;
  let cur = gainDrift(start, na);
  for (let it = 0; it < o.iterations; it++) {
    const S = divided(s, o.aFilter ? cur.x.subarray(0, na) : []);
    const dAr = o.order > 0 ? arOfResiduals(S, cur.x, o.order, from) : new Float64Array(0);
    if (!dAr) return null;
    const rows = rowsOf(S, dAr, from);
    const r = polyIv(rows, s.o.lags);
    if (!r) return null;
    let tFirst = NaN;
    for (let k = 0; k < S.t.length && !Number.isFinite(tFirst); k++) if (S.inf[k] && S.t[k]! >= from) tFirst = S.t[k]!;
    cur = gainDrift({ ...r, d: start.d, degree: 1, window: windowS, tLast, tFirst, n: rows.length }, na);
  }
  return cur;
}

export { polyDriftFit };

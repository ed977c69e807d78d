/**
 * The error's autocorrelation within constant-set-point stretches, for the stiction tests.
 *
 * Why: the stiction tests (stiction.ts) are asked when the error oscillates or rings, judged from
 * the autocorrelation of the whole record's error. A set-point step gives the error a large,
 * one-signed transient that dominates that autocorrelation: its positive correlation over the
 * settling time fills the dip a stick-slip cycle of a few tenths of a percent makes, so a loop
 * whose set point is moved now and then never reaches the tests. Oscillation and performance
 * figures from routine data are meant for stretches at a constant set point (the premise of
 * Harris 1989 and of Thornhill, Huang & Zhang 2003, whose autocorrelation regularity is taken
 * over data without set-point changes; common practice), so here the autocorrelation is pooled
 * over the closed-loop stretches at a constant set point, each less its own mean, and the
 * stretches' first settling time after each move is left out (ours: one integral time, the
 * controller's own time scale for removing an offset; with no integral action, none).
 *
 * Pooling: r(k) = Σ_s n_s c_s(k) / Σ_s n_s c_s(0), with c_s the biased autocovariance of stretch s
 * (a lag longer than a stretch adds nothing from it).
 */
import { autocovariance } from "./signal";

/** Shortest stretch pooled, samples (ours: shorter ones hold no cycle worth its mean's loss). */
const MIN_STRETCH = 100;

export interface SetPointRinging {
  /** Autocorrelation at its first trough after the first zero crossing (ringing when < RING_DEPTH). */
  depth: number;
  /** Twice the trough's lag: the cycle's period, samples. */
  periodSamples: number;
  stretches: number;
  samples: number;
}

/**
 * Closed-loop stretches of `include` at a constant set point (within `tol`), after `skip` samples
 * of settling from each move or open-loop spell; only when the set point moves (one stretch is the whole record,
 * which the whole record's autocorrelation already judged).
 */
export function setPointStretches(sp: Float64Array, include: Uint8Array, tol: number, skip: number): [number, number][] | null {
  const raw: [number, number][] = [];
  let start = -1;
  let moves = 0;
  for (let i = 0; i <= sp.length; i++) {
    const ok = i < sp.length && include[i] === 1;
    const same = ok && start >= 0 && Math.abs(sp[i]! - sp[start]!) <= tol;
    if (ok && start >= 0 && !same) moves++;
    if (start >= 0 && !same) {
      raw.push([start, i]);
      start = -1;
    }
    if (ok && start < 0) start = i;
  }
  if (moves === 0) return null;
  return raw.map(([a, b]): [number, number] => [a + skip, b]).filter(([a, b]) => b - a >= MIN_STRETCH);
}

/** The pooled autocorrelation's first trough (see above); null without moves or long enough stretches. */
export function setPointRinging(e: Float64Array, sp: Float64Array, include: Uint8Array, tol: number, skip: number): SetPointRinging | null {
  const stretches = setPointStretches(sp, include, tol, skip);
  if (!stretches || stretches.length === 0) return null;
  const longest = Math.max(...stretches.map(([a, b]) => b - a));
  const maxLag = Math.floor(longest / 3);
  if (maxLag < 8) return null;
  const pooled = new Float64Array(maxLag + 1);
  let samples = 0;
  for (const [a, b] of stretches) {
    const c = autocovariance(e.subarray(a, b), maxLag);
    for (let k = 0; k < c.length; k++) pooled[k] = pooled[k]! + (b - a) * c[k]!;
    samples += b - a;
  }
  if (!(pooled[0]! > 0)) return null;
  let k = 1;
  while (k <= maxLag && pooled[k]! > 0) k++;
  if (k > maxLag) return null;
  while (k < maxLag && pooled[k + 1]! < pooled[k]!) k++;
  return { depth: pooled[k]! / pooled[0]!, periodSamples: 2 * k, stretches: stretches.length, samples };
}

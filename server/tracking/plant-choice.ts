/**
 * Which plant estimate the tracker reports (docs/domain.md §3), and whether an estimate is one a
 * sampled plant under the loop's controller can be.
 */
import type { InstrumentalArxEstimator } from "@/lib/control/riv";
import { polyRoots } from "@/lib/control/roots";
import type { Complex } from "@/lib/control/types";
import { modulus } from "./figures";

/**
 * Structure choice, at state time: the configured structure while its plant poles are those
 * a sampled continuous plant can have, else the one with a pole fewer. A zero-order-hold
 * sampled plant has poles exp(s T) (Åström & Wittenmark, *Computer-Controlled Systems*, 3rd
 * ed., 1997, sec. 2.3): a real pole below 0 has no continuous counterpart, and a stable or
 * integrating process none outside the unit circle. The ill-determined extra pole of an
 * over-parameterised IV fit lands exactly there (negative real or far outside), while a true
 * second-order plant keeps its poles inside at the periods the period proposal aims at. When
 * both are implausible, the closed-loop simulation error over the set-point responses decides.
 */
export function choosePlant(full: InstrumentalArxEstimator, reduced: InstrumentalArxEstimator | null, ready: (p: InstrumentalArxEstimator) => boolean, action: "direct" | "reverse"): InstrumentalArxEstimator {
  const red = reduced;
  if (!red || !ready(red)) return full;
  if (!ready(full)) return red;
  if (plausibility(full, action) === null) return full;
  if (plausibility(red, action) === null) return red;
  const ef = full.simulationError();
  const er = red.simulationError();
  return Number.isFinite(ef) && (!Number.isFinite(er) || ef < er) ? full : red;
}

/**
 * Null when the estimate is one a sampled plant under this controller can be: poles as in
 * `plausiblePlantPoles`, and a process gain B(1) of the sign the controller action implies
 * (reverse action for a rising process, common practice); else the reason.
 */
export function plausibility(p: InstrumentalArxEstimator, action: "direct" | "reverse"): string | null {
  if (!plausiblePlantPoles(p.theta.subarray(0, p.na))) return "plant poles no sampled process has";
  let gain = 0;
  for (let j = p.na; j < p.d; j++) gain += p.theta[j]!;
  const want = action === "reverse" ? 1 : -1;
  if (!(gain * want > 0)) return "process gain of the wrong sign for the controller action";
  return null;
}

/** Plant poles (roots of 1 + a1 z^-1 + ...) inside radius 1.02 and no real pole below -0.05. */
function plausiblePlantPoles(a: ArrayLike<number>): boolean {
  const coeffs = [1];
  for (let i = 0; i < a.length; i++) coeffs.push(a[i]!);
  if (!coeffs.every(Number.isFinite)) return false;
  let roots: Complex[];
  try {
    roots = polyRoots(coeffs);
  } catch {
    return false;
  }
  return roots.every((z) => modulus(z) <= 1.02 && !(Math.abs(z.im) < 1e-9 && z.re < -0.05));
}

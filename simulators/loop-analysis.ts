/**
 * Analysis of a simulated loop as a linear system (for the simulators' drifts and for tests):
 * its closed-loop state matrix and the gain factor at which it reaches the unit circle.
 */
import type { QTf } from "@/lib/control/types";
import { eigenvalues } from "./eigen";
import type { DiscreteStateSpace } from "./plant";

/**
 * The process-gain multiplier at which the loop (as configured, no drift) reaches the unit
 * circle: bisection on the spectral radius of the closed-loop state matrix. Infinity if none below 1e4.
 */
export function criticalGainFactor(plant: DiscreteStateSpace, controller: QTf): number {
  const rho = (g: number) => Math.max(...eigenvalues(closedLoopStateMatrix(plant, controller, g, 0)).map((z) => Math.hypot(z.re, z.im)));
  if (rho(1) >= 1) return 1;
  let lo = 1;
  let hi = 2;
  while (rho(hi) < 1) {
    lo = hi;
    hi *= 2;
    if (hi > 1e4) return Infinity;
  }
  for (let i = 0; i < 50; i++) {
    const mid = 0.5 * (lo + hi);
    if (rho(mid) < 1) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/**
 * The closed-loop state matrix for a process-gain multiplier g and M extra samples of dead time,
 * for the linear loop in auto (valve following its command, MV inside its limits), at the
 * controller period. State: plant states
 * (dead time included), the extra dead-time shift register, the controller's states
 * (observable canonical realisation of N(q)/D(q)).
 */
export function closedLoopStateMatrix(p: DiscreteStateSpace, controller: QTf, g: number, M: number): number[][] {
  const n = p.n;
  // controller C(q) = (b0 + b1 q^-1 + ...)/(1 + a1 q^-1 + ...)
  const d0 = controller.den[0]!;
  const m = Math.max(controller.num.length, controller.den.length) - 1;
  const b = Array.from({ length: m + 1 }, (_, i) => (controller.num[i] ?? 0) / d0);
  const a = Array.from({ length: m + 1 }, (_, i) => (controller.den[i] ?? 0) / d0);
  const dim = n + M + m;
  const X: number[][] = Array.from({ length: dim }, () => new Array<number>(dim).fill(0));
  const ix = 0;
  const iz = n;
  const is = n + M;
  // u = Cc s + Dc e, e = -y = -C x   (Cc = [1, 0, ...], Dc = b0)
  const uRow = new Array<number>(dim).fill(0);
  for (let j = 0; j < n; j++) uRow[ix + j] = -b[0]! * p.C[j]!;
  if (m > 0) uRow[is] = 1;
  // plant: x' = A x + B g w, w = z_M (M > 0) or u
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < n; j++) X[ix + i]![ix + j]! += p.A[i * n + j]!;
    if (M > 0) X[ix + i]![iz + M - 1]! += p.B[i]! * g;
    else for (let j = 0; j < dim; j++) X[ix + i]![j]! += p.B[i]! * g * uRow[j]!;
  }
  // extra delay: z1' = u, zj' = z_{j-1}
  for (let r = 0; r < M; r++) {
    if (r === 0) for (let j = 0; j < dim; j++) X[iz]![j]! += uRow[j]!;
    else X[iz + r]![iz + r - 1] = 1;
  }
  // controller: s_i' = s_{i+1} - a_i s_1 + (b_i - a_i b0) e
  for (let i = 0; i < m; i++) {
    const ai = a[i + 1]!;
    const bi = b[i + 1]! - ai * b[0]!;
    X[is + i]![is]! += -ai;
    if (i + 1 < m) X[is + i]![is + i + 1]! += 1;
    for (let j = 0; j < n; j++) X[is + i]![ix + j]! += -bi * p.C[j]!;
  }
  return X;
}

/**
 * Monte Carlo harness: a LoopTracker (server/tracking/loop-tracker.ts) in closed loop with a
 * known ARX plant and the loop's own PI (discretePid at the estimation period), so the true
 * closed-loop poles are the roots of closedLoopPolynomial(true plant, controller). Shared by
 * tests/control/riv-closed-loop-coverage.test.ts (its closed-loop samples) and the coverage table of `npm run bench`.
 * Units: PV and MV in % of range (pvLo/pvHi and mvLo/mvHi 0..100), periods 1 s.
 */
import { closedLoopPolynomial, discretePid } from "@/lib/control/closed-loop";
import { polyRoots } from "@/lib/control/roots";
import type { ArxModel } from "@/lib/control/types";
import type { LoopStateDto } from "@/lib/domain/types";
import { LoopTracker } from "@/server/tracking/loop-tracker";
import type { LoopConfig } from "@/server/tracking/types";
import { FakeClock } from "../tracking/helpers";
import { mulberry32, normal } from "../helpers/seeded-random";
import { piTuning, testLoopConfig } from "@/tests/helpers/loop-config";

export interface CoveragePlant {
  name: string;
  plant: ArxModel;
  kp: number;
  ti: number;
  /** PV measurement noise, % of range (standard deviation). */
  noise: number;
  /** Samples between set-point moves. */
  stepEvery: number;
}

/** A complex dominant pair: A = 1 - 1.5 q^-1 + 0.7 q^-2, B = 0.5 + 0.3 q^-1 under PI kp 0.3, ti 3 s. */
export const COMPLEX_PAIR: CoveragePlant = { name: "complex pair", plant: { a: [-1.5, 0.7], b: [0.5, 0.3], nk: 1, T: 1 }, kp: 0.3, ti: 3, noise: 0.3, stepEvery: 40 };
/** A real dominant pole: A = (1 - 0.9 q^-1)(1 - 0.5 q^-1), B = 0.2 + 0.1 q^-1 under PI kp 0.5, ti 20 s. */
export const REAL_POLE: CoveragePlant = { name: "real dominant pole", plant: { a: [-1.4, 0.45], b: [0.2, 0.1], nk: 1, T: 1 }, kp: 0.5, ti: 20, noise: 0.3, stepEvery: 40 };

export function coverageConfig(p: CoveragePlant): LoopConfig {
  return testLoopConfig({ tag: "MC-1", controller: piTuning(p.kp, p.ti), na: p.plant.a.length, nb: p.plant.b.length, nk: p.plant.nk });
}

/** The true closed-loop poles' spectral radius and whether the dominant pole is real. */
export function trueDominant(p: CoveragePlant): { radius: number; real: boolean } {
  const ctrl = discretePid({ kp: p.kp, ti: p.ti, T: 1, action: "reverse" });
  const roots = polyRoots(closedLoopPolynomial(p.plant, ctrl));
  const dom = roots.reduce((x, y) => (Math.hypot(y.re, y.im) > Math.hypot(x.re, x.im) ? y : x));
  return { radius: Math.hypot(dom.re, dom.im), real: dom.im === 0 };
}

/**
 * The seeded closed loop of one run: the plant under the loop's own PI with set-point moves every
 * `stepEvery` samples and white PV noise; yields each sample's SP, PV and MV (deviations, % of range).
 */
export function* closedLoopSamples(p: CoveragePlant, samples: number, seed: number): Generator<{ sp: number; pv: number; u: number }> {
  const g = normal(mulberry32(seed));
  const u01 = mulberry32(seed ^ 0x5bd1e995);
  const ctrl = discretePid({ kp: p.kp, ti: p.ti, T: 1, action: "reverse" });
  const { a, b, nk } = p.plant;
  const y0 = new Array<number>(a.length).fill(0);
  const uh = new Array<number>(nk + b.length).fill(0);
  const eh = new Array<number>(ctrl.num.length).fill(0);
  let sp = 0;
  for (let k = 0; k < samples; k++) {
    if (k % p.stepEvery === 0) sp = 10 * (u01() - 0.5);
    let y = 0;
    for (let i = 0; i < a.length; i++) y -= a[i]! * y0[i]!;
    for (let j = 0; j < b.length; j++) y += b[j]! * uh[nk - 1 + j]!;
    const pv = y + p.noise * g();
    // controller den(q) u = num(q) e, den[0] = 1
    eh.unshift(sp - pv);
    eh.pop();
    let u = 0;
    for (let i = 0; i < ctrl.num.length; i++) u += ctrl.num[i]! * eh[i]!;
    for (let i = 1; i < ctrl.den.length; i++) u -= ctrl.den[i]! * uh[i - 1]!;
    y0.unshift(y);
    y0.pop();
    uh.unshift(u);
    uh.pop();
    yield { sp, pv, u };
  }
}

/**
 * One seeded run of `samples` seconds; returns the tracker's last state (null if it produced none).
 * `each` receives every state with its sample count; `done` the tracker after the last sample.
 */
export function runTracker(p: CoveragePlant, samples: number, seed: number, each?: (k: number, s: LoopStateDto) => void, done?: (tracker: LoopTracker) => void): LoopStateDto | null {
  const clock = new FakeClock();
  const tracker = new LoopTracker(coverageConfig(p), { clock });
  let last: LoopStateDto | null = null;
  let k = 0;
  for (const { sp, pv, u } of closedLoopSamples(p, samples, seed)) {
    clock.t += 1000;
    const st = tracker.push([{ t: clock.t, sp: 50 + sp, pv: 50 + pv, mv: 50 + u, mode: "auto" }], clock.t);
    k++;
    if (st) {
      last = st;
      each?.(k, st);
    }
  }
  done?.(tracker);
  return last;
}

/** Counted runs and covered ones, for runs whose reported plant has the configured order and for those with a pole fewer. */
export interface CoverageByOrder {
  configured: { counted: number; covered: number };
  reduced: { counted: number; covered: number };
}

/**
 * Share of runs whose 95 % interval (radius -/+ 1.96 sd of the dominant pole) holds the true
 * radius; `byOrder` splits the counted runs by the order of the plant the tracker reported at the
 * end (the configured one, or one pole fewer: server/tracking/plant-choice.ts), since the two
 * groups miss for different reasons.
 */
export function trackerCoverage(p: CoveragePlant, runs: number, samples: number, seed: number): { coverage: number; counted: number; byOrder: CoverageByOrder } {
  const truth = trueDominant(p).radius;
  const byOrder: CoverageByOrder = { configured: { counted: 0, covered: 0 }, reduced: { counted: 0, covered: 0 } };
  let covered = 0;
  let counted = 0;
  for (let r = 0; r < runs; r++) {
    let order = p.plant.a.length;
    const st = runTracker(p, samples, seed + r, undefined, (t) => (order = t.plantModel().a.length));
    if (!st || st.spectralRadius === null || st.radiusSd === null || st.trackerState !== "tracking") continue;
    counted++;
    const group = order < p.plant.a.length ? byOrder.reduced : byOrder.configured;
    group.counted++;
    if (Math.abs(st.spectralRadius - truth) <= 1.959964 * st.radiusSd) {
      covered++;
      group.covered++;
    }
  }
  return { coverage: counted ? covered / counted : NaN, counted, byOrder };
}

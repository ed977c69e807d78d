/**
 * The simulated plants: continuous models (first order, underdamped second order, integrating;
 * each with dead time) in normalised units (% of PV span per % of MV span), turned into a
 * discrete state-space model at the controller's period by zero-order-hold discretisation
 * (`c2dZohStateSpace` of lib/control, fractional dead time included).
 */
import { c2dZohStateSpace } from "@/lib/control/discretize";
import type { ContinuousTf } from "@/lib/control/types";
import type { PlantSpec } from "./scenario";

/** x(k+1) = A x(k) + B w(k), y(k) = C x(k) + D w(k); row-major A (n x n), sampled at T s. */
export interface DiscreteStateSpace {
  n: number;
  A: Float64Array;
  B: Float64Array;
  C: Float64Array;
  D: number;
  T: number;
}

/** The plant's continuous transfer function in descending powers of s (dead time excluded). */
export function plantTransferFunction(spec: PlantSpec): ContinuousTf {
  switch (spec.type) {
    case "first-order":
      return { num: [spec.gain], den: [spec.timeConstantS, 1] };
    case "second-order": {
      const wn = spec.naturalFrequency;
      return { num: [spec.gain * wn * wn], den: [1, 2 * spec.zeta * wn, wn * wn] };
    }
    case "integrating":
      return spec.lagS > 0 ? { num: [spec.gain], den: [spec.lagS, 1, 0] } : { num: [spec.gain], den: [1, 0] };
  }
}

/** Steady-state gain (% PV per % MV); Infinity for an integrating plant. */
export function plantStaticGain(spec: PlantSpec): number {
  return spec.type === "integrating" ? Infinity : spec.gain;
}

/**
 * ZOH discretisation of the plant (dead time included, fractional part too) at period T s.
 * The state holds the plant's own states and the delayed inputs the dead time needs.
 */
const cache = new Map<string, DiscreteStateSpace>();

export function discretisePlant(spec: PlantSpec, T: number): DiscreteStateSpace {
  // load runs clone one plant thousands of times: discretise each (plant, T) once; the result is never mutated
  const key = `${JSON.stringify(spec)}@${T}`;
  const hit = cache.get(key);
  if (hit) return hit;
  const out = discretiseUncached(spec, T);
  if (cache.size < 1000) cache.set(key, out);
  return out;
}

function discretiseUncached(spec: PlantSpec, T: number): DiscreteStateSpace {
  const ss = c2dZohStateSpace(plantTransferFunction(spec), T, spec.deadTimeS);
  const n = ss.a.length;
  // the simulated plants are strictly proper: the PV at k does not depend on the MV at k
  if (Math.abs(ss.d) > 1e-12) throw new RangeError(`plant model must be strictly proper (d = ${ss.d})`);
  return { n, A: Float64Array.from(ss.a.flat()), B: Float64Array.from(ss.b), C: Float64Array.from(ss.c), D: 0, T };
}

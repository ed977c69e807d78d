/** The simulated loop's controller: a q^-1 transfer function run in velocity form. */
import type { QTf } from "@/lib/control/types";

/** Split a q^-1 controller into velocity form: D'(q) v = N'(q) e with v = u(k) - u(k-1). */
export function velocityForm(c: QTf): { n: Float64Array; d: Float64Array } {
  const den = [...c.den];
  const num = [...c.num];
  const d0 = den[0]!;
  // synthetic division of den by (1 - q^-1) when it has that factor (sum of coefficients 0)
  const sum = den.reduce((s, v) => s + v, 0);
  let dPrime: number[];
  let nPrime: number[];
  if (Math.abs(sum) <= 1e-12 * den.reduce((s, v) => s + Math.abs(v), 0)) {
    dPrime = [];
    let acc = 0;
    for (let i = 0; i < den.length - 1; i++) {
      acc += den[i]!;
      dPrime.push(acc);
    }
    nPrime = num;
  } else {
    dPrime = den;
    nPrime = [...num, 0].map((v, i) => v - (i > 0 ? (num[i - 1] ?? 0) : 0));
  }
  return {
    n: Float64Array.from(nPrime.map((v) => v / d0)),
    d: Float64Array.from(dPrime.map((v) => v / d0)),
  };
}

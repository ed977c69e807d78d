/**
 * The roots a tracker state needs, by the allocation-free paths of lib/control: the closed-loop
 * characteristic polynomial by `closedLoopArxInto` and its roots by `polyRootsInto` (a cubic, the
 * common second-order plant under a PI, in closed form instead of the iteration; equal to
 * `polyRoots` to the roots' conditioning, tests/control/roots-jury.test.ts). Always a cold solve,
 * so that a tracker resumed from a checkpoint computes the same roots as the one that wrote it.
 */
import { closedLoopArxInto } from "@/lib/control/closed-loop";
import { polyRootsInto } from "@/lib/control/roots";
import type { ArxModel, Complex, QTf } from "@/lib/control/types";

// scratch buffers, grown on demand (a call fills and reads them before it returns)
let theta = new Float64Array(16);
let coeffs = new Float64Array(16);
let re = new Float64Array(16);
let im = new Float64Array(16);

function ensure(n: number): void {
  if (n <= coeffs.length) return;
  const cap = Math.max(n, 2 * coeffs.length);
  theta = new Float64Array(cap);
  coeffs = new Float64Array(cap);
  re = new Float64Array(cap);
  im = new Float64Array(cap);
}

function rootsFrom(c: ArrayLike<number>, length: number): Complex[] {
  const count = polyRootsInto(c, re, im, length);
  const out = new Array<Complex>(count);
  for (let i = 0; i < count; i++) out[i] = { re: re[i]!, im: im[i]! };
  return out;
}

/** All roots of a real polynomial (descending powers), in the order of `polyRoots`. @throws as `polyRoots`. */
export function rootsOf(c: readonly number[]): Complex[] {
  ensure(c.length);
  return rootsFrom(c, c.length);
}

/**
 * The closed-loop characteristic polynomial of an ARX plant under `controller` (as
 * `closedLoopPolynomial`, the same coefficients bit for bit) and its roots.
 * @throws NonFiniteInputError on a non-finite coefficient (as `polyRoots`).
 */
export function closedLoopRoots(model: ArxModel, controller: QTf): { char: number[]; roots: Complex[] } {
  const na = model.a.length;
  const nb = model.b.length;
  const len = Math.max(na + controller.den.length, model.nk + nb + controller.num.length - 1);
  ensure(Math.max(len, na + nb));
  for (let i = 0; i < na; i++) theta[i] = model.a[i]!;
  for (let i = 0; i < nb; i++) theta[na + i] = model.b[i]!;
  const n = closedLoopArxInto(theta, na, nb, model.nk, controller.num, controller.den, coeffs);
  const char = new Array<number>(n);
  for (let i = 0; i < n; i++) char[i] = coeffs[i]!;
  return { char, roots: rootsFrom(char, n) };
}

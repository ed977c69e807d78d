/**
 * Roots of real polynomials (descending powers; see `types.ts`).
 *
 * Method:
 * - degree 1 and 2 in closed form (the quadratic by the cancellation-free formula
 *   q = -(b + sign(b) sqrt(b^2 - 4ac)) / 2, roots q/a and c/q; Press et al., *Numerical Recipes*,
 *   3rd ed., 2007, sec. 5.6);
 * - degree >= 3 by the Aberth–Ehrlich simultaneous iteration (O. Aberth, *Iteration methods for
 *   finding all zeros of a polynomial simultaneously*, Math. Comp. 27, 1973) with the refinements of
 *   D. A. Bini, *Numerical computation of polynomial zeros by means of Aberth's method*, Numer.
 *   Algorithms 13, 1996: starting points on circles from the Newton polygon, evaluation through the
 *   reversed polynomial when |z| > 1, and a per-root stop once |p(z)| is at the rounding level of
 *   Horner's rule, 2(m + 1) eps sum |a_k| |z|^k (backward error of order machine epsilon).
 *   A root whose last correction took it out of the stop test's region goes back to its last
 *   position that passed; `polyRootsWithBounds` (root-bounds.ts) reports the test per root with a
 *   conditioning bound.
 * The variable is first scaled by a power of two near the geometric mean of the root moduli
 * (exact in binary floating point). Exact zero roots (trailing zero coefficients) are returned
 * exactly; leading zero coefficients are stripped. For real input the returned set is exactly
 * closed under conjugation (pairs are symmetrised, unpaired near-real roots made real).
 *
 * Accuracy: a simple root to about eps * (condition number); a root of multiplicity m to about
 * eps^(1/m) (the limit for any method in double precision).
 *
 * Output order: descending modulus, then descending real part; the two roots of a conjugate pair
 * are adjacent, the one with positive imaginary part first.
 */
import { aberth } from "./roots-aberth";
import { cubic, CUBIC_FAILED, CUBIC_UNSORTED, quadratic } from "./roots-closed-form";
import { ControlArgumentError } from "./errors";
import { leadingNonZero } from "./poly";
import type { Complex } from "./types";

/**
 * All roots of the real polynomial `coeffs` (descending powers), with multiplicity, written to
 * `outRe`/`outIm`; returns the number of roots (the degree after stripping leading zeros).
 * Allocation-free once the internal scratch buffers have grown to the degree in use (hot path).
 * `length` (default `coeffs.length`) lets a caller pass a longer reusable buffer.
 * Degree 3 (after removing zero roots) is solved here in closed form (trigonometric / Cardano
 * form, Press et al. 2007 sec. 5.6), its real roots polished by Newton steps on the original
 * cubic, kept only while they reduce |p(z)| (a complex pair as described at `cubic`); this is
 * several times faster than the iteration and
 * agrees with `polyRoots` to the conditioning of the roots (tested). Other degrees use the same
 * method as `polyRoots`.
 * `warmStart`: when true and `outRe`/`outIm` still hold the roots of a previous call with the same
 * degree and the same number of zero roots (a tracker re-solving a slowly changing polynomial),
 * those roots, slightly rotated to break the conjugate symmetry, seed the iteration instead of the
 * Newton-polygon circles; typically 2–4 iterations instead of 5–15. For the closed-form cubic,
 * the previous real root seeds Halley steps (no cube root or cosine), accepted only when |p| is
 * at its rounding level, otherwise the closed form runs. The result is the same to rounding
 * either way.
 *
 * @throws NonFiniteInputError on NaN/infinite coefficients; ControlArgumentError for the zero
 *   polynomial or output buffers that are too short.
 */
export function polyRootsInto(
  coeffs: ArrayLike<number>,
  outRe: Float64Array,
  outIm: Float64Array,
  length: number = coeffs.length,
  warmStart = false,
): number {
  if (length === 4 && outRe.length >= 3 && outIm.length >= 3) {
    // the tracker's common case (second-order plant under a PI): a proper cubic without zero roots
    const c0 = coeffs[0]!;
    const c3 = coeffs[3]!;
    if (c0 !== 0 && c3 !== 0 && Number.isFinite(c0 + coeffs[1]! + coeffs[2]! + c3)) {
      const found = cubic(coeffs, 0, outRe, outIm, warmStart);
      if (found !== CUBIC_FAILED) {
        if (found === CUBIC_UNSORTED) sortRoots(outRe, outIm, 3);
        return 3;
      }
    }
  }
  return rootsCore(coeffs, outRe, outIm, length, warmStart, true);
}

function rootsCore(
  coeffs: ArrayLike<number>,
  outRe: Float64Array,
  outIm: Float64Array,
  length: number,
  warmStart: boolean,
  fastCubic: boolean,
): number {
  const first = leadingNonZero(coeffs, length, "polyRoots: the zero polynomial has no isolated roots");
  const degree = length - 1 - first;
  if (outRe.length < degree || outIm.length < degree) {
    throw new ControlArgumentError(`polyRootsInto: output buffers need length >= ${degree}`);
  }
  let last = length - 1;
  while (coeffs[last] === 0) last--;
  const zeros = length - 1 - last;
  const m = last - first; // degree of the part without zero roots
  let count = 0;
  if (m === 1) {
    outRe[0] = -coeffs[last]! / coeffs[first]!;
    outIm[0] = 0;
    count = 1;
  } else if (m === 2) {
    quadratic(coeffs[first]!, coeffs[first + 1]!, coeffs[first + 2]!, outRe, outIm);
    count = 2;
  } else if (m === 3 && fastCubic && cubic(coeffs, first, outRe, outIm, warmStart) !== CUBIC_FAILED) {
    count = 3;
  } else if (m >= 3) {
    aberth(coeffs, first, m, outRe, outIm, warmStart);
    count = m;
  }
  for (let k = 0; k < zeros; k++) {
    outRe[count] = 0;
    outIm[count] = 0;
    count++;
  }
  sortRoots(outRe, outIm, count);
  return count;
}

/** All roots of a real polynomial (descending powers), with multiplicity; see the module doc. */
export function polyRoots(coeffs: ArrayLike<number>): Complex[] {
  const n = Math.max(coeffs.length - 1, 0);
  const re = new Float64Array(n);
  const im = new Float64Array(n);
  const count = rootsCore(coeffs, re, im, coeffs.length, false, false);
  const out: Complex[] = new Array<Complex>(count);
  for (let i = 0; i < count; i++) out[i] = { re: re[i]!, im: im[i]! };
  return out;
}

/** Largest root modulus (spectral radius) of a real polynomial; 0 for a degree-0 polynomial. */
export function spectralRadius(coeffs: ArrayLike<number>): number {
  const roots = polyRoots(coeffs);
  let r = 0;
  for (const z of roots) r = Math.max(r, Math.hypot(z.re, z.im));
  return r;
}

/**
 * Insertion sort: descending modulus, then descending real part, then descending imaginary part
 * (so the two roots of a conjugate pair are adjacent, the positive imaginary part first).
 */
function sortRoots(re: Float64Array, im: Float64Array, n: number): void {
  for (let i = 1; i < n; i++) {
    const r = re[i]!;
    const q = im[i]!;
    const mod = r * r + q * q;
    let j = i - 1;
    while (j >= 0) {
      const mj = re[j]! * re[j]! + im[j]! * im[j]!;
      if (mj > mod || (mj === mod && (re[j]! > r || (re[j]! === r && im[j]! >= q)))) break;
      re[j + 1] = re[j]!;
      im[j + 1] = im[j]!;
      j--;
    }
    re[j + 1] = r;
    im[j + 1] = q;
  }
}

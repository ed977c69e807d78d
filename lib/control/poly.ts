/**
 * Small polynomial helpers on plain coefficient arrays.
 *
 * Unless a function says otherwise, arrays are in descending powers of the variable
 * (`[1, -1.5, 0.7]` is z^2 - 1.5 z + 0.7; see the conventions in `types.ts`). Multiplication and
 * addition do not care which convention is used as long as both operands use the same one;
 * `polyAdd` aligns on the constant term (descending) and `qPolyAdd` on the leading term (q^-1).
 */
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import type { Complex } from "./types";

/** Throws NonFiniteInputError when any coefficient is NaN or infinite. */
export function assertFiniteCoefficients(coeffs: ArrayLike<number>, what = "polynomial coefficients"): void {
  for (let i = 0; i < coeffs.length; i++) {
    if (!Number.isFinite(coeffs[i])) throw new NonFiniteInputError(`${what} (index ${i})`);
  }
}

/** Removes leading exact zeros (descending form); an all-zero input gives `[]`. */
export function stripLeadingZeros(coeffs: ArrayLike<number>): number[] {
  let start = 0;
  while (start < coeffs.length && coeffs[start] === 0) start++;
  return Array.from(coeffs).slice(start);
}

/**
 * A transfer function's numerator and denominator (descending powers) without leading exact zeros,
 * checked proper (deg num <= deg den). A zero numerator keeps its last coefficient (an empty one
 * stays empty); a zero or empty denominator throws. `what` names the caller in the messages.
 */
export function trimProperTf(num: readonly number[], den: readonly number[], what: string): { num: number[]; den: number[] } {
  const d = stripLeadingZeros(den);
  if (d.length === 0) throw new ControlArgumentError(`${what}: the denominator is zero`);
  let j = 0;
  while (j < num.length - 1 && num[j] === 0) j++;
  const n = num.slice(j);
  if (n.length > d.length) {
    throw new ControlArgumentError(`${what} needs a proper transfer function: numerator degree ${n.length - 1} > denominator degree ${d.length - 1}`);
  }
  return { num: n, den: d };
}

/** Product of two polynomials (convolution of the coefficient arrays; either convention). */
export function polyMul(p: ArrayLike<number>, q: ArrayLike<number>): number[] {
  if (p.length === 0 || q.length === 0) return [];
  const out = new Array<number>(p.length + q.length - 1).fill(0);
  for (let i = 0; i < p.length; i++) {
    const pi = p[i]!;
    if (pi === 0) continue;
    for (let j = 0; j < q.length; j++) out[i + j]! += pi * q[j]!;
  }
  return out;
}

/** Sum of two descending-power polynomials, aligned on the constant term. */
export function polyAdd(p: ArrayLike<number>, q: ArrayLike<number>): number[] {
  const n = Math.max(p.length, q.length);
  const out = new Array<number>(n).fill(0);
  for (let i = 0; i < p.length; i++) out[n - p.length + i]! += p[i]!;
  for (let i = 0; i < q.length; i++) out[n - q.length + i]! += q[i]!;
  return out;
}

/** Sum of two q^-1 polynomials (ascending powers), aligned on the q^0 term. */
export function qPolyAdd(p: ArrayLike<number>, q: ArrayLike<number>): number[] {
  const n = Math.max(p.length, q.length);
  const out = new Array<number>(n).fill(0);
  for (let i = 0; i < p.length; i++) out[i]! += p[i]!;
  for (let i = 0; i < q.length; i++) out[i]! += q[i]!;
  return out;
}

/** Multiplies every coefficient by `k`. */
export function polyScale(p: ArrayLike<number>, k: number): number[] {
  return Array.from(p, (c) => c * k);
}

/** Horner evaluation of a descending-power real polynomial at a real point. */
export function polyEval(p: ArrayLike<number>, x: number): number {
  let acc = 0;
  for (let i = 0; i < p.length; i++) acc = acc * x + p[i]!;
  return acc;
}

/** Horner evaluation of a descending-power real polynomial at a complex point. */
export function polyEvalComplex(p: ArrayLike<number>, z: Complex): Complex {
  let re = 0;
  let im = 0;
  for (let i = 0; i < p.length; i++) {
    const t = re * z.re - im * z.im + p[i]!;
    im = re * z.im + im * z.re;
    re = t;
  }
  return { re, im };
}

/** Derivative of a descending-power polynomial (degree drops by one; a constant gives `[]`). */
export function polyDerivative(p: ArrayLike<number>): number[] {
  const n = p.length - 1;
  const out: number[] = [];
  for (let i = 0; i < n; i++) out.push(p[i]! * (n - i));
  return out;
}

/**
 * Monic polynomial (descending powers) with the given roots. Complex roots must come in
 * conjugate pairs for the result to be real; the imaginary parts of the product are dropped,
 * so pass exact conjugates.
 */
export function polyFromRoots(roots: readonly Complex[]): number[] {
  let re = [1];
  let im = [0];
  for (const r of roots) {
    const nre = new Array<number>(re.length + 1).fill(0);
    const nim = new Array<number>(re.length + 1).fill(0);
    for (let i = 0; i < re.length; i++) {
      nre[i]! += re[i]!;
      nim[i]! += im[i]!;
      // minus r times the coefficient, shifted one power down
      nre[i + 1]! -= re[i]! * r.re - im[i]! * r.im;
      nim[i + 1]! -= re[i]! * r.im + im[i]! * r.re;
    }
    re = nre;
    im = nim;
  }
  return re;
}

/**
 * Reads a q^-1 polynomial (ascending powers of q^-1) as a descending polynomial in z of degree
 * `degree`: c0 + c1 q^-1 + ... + cm q^-m multiplied by z^degree (degree >= m). The result has
 * `degree + 1` coefficients; the extra ones are trailing zeros (roots at the origin).
 */
export function qToZ(q: ArrayLike<number>, degree = q.length - 1): number[] {
  if (degree < q.length - 1) {
    throw new ControlArgumentError(`qToZ: degree ${degree} is below the q^-1 polynomial's length ${q.length - 1}`);
  }
  const out = new Array<number>(degree + 1).fill(0);
  for (let i = 0; i < q.length; i++) out[i] = q[i]!;
  return out;
}

/**
 * Index of the first non-zero entry of coeffs[0..length), after checking that every entry is finite.
 * @throws NonFiniteInputError on NaN/infinite coefficients; ControlArgumentError(`zeroMessage`) for the zero polynomial.
 */
export function leadingNonZero(coeffs: ArrayLike<number>, length: number, zeroMessage: string): number {
  let first = -1;
  for (let i = 0; i < length; i++) {
    const c = coeffs[i]!;
    if (!Number.isFinite(c)) throw new NonFiniteInputError(`polynomial coefficient ${i}`);
    if (first < 0 && c !== 0) first = i;
  }
  if (first < 0) throw new ControlArgumentError(zeroMessage);
  return first;
}

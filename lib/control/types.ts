/**
 * Conventions shared by all of lib/control (stated once, here):
 *
 * 1. z-descending polynomials: `number[]` of coefficients in descending powers of z.
 *    `[1, -1.5, 0.7]` is z^2 - 1.5 z + 0.7. Characteristic polynomials, `c2dZoh` results and
 *    `closedLoopPolynomial` use this form.
 * 2. q^-1 polynomials: `number[]` in ascending powers of the backward shift q^-1.
 *    `[1, -1]` is 1 - q^-1. `discretePid` returns its numerator/denominator in this form.
 * 3. ARX `a` vectors: a1..a_na WITHOUT the leading 1 of A(q) = 1 + a1 q^-1 + ... + a_na q^-na;
 *    `b` holds b0..b_{nb-1} of B(q) = b0 + b1 q^-1 + ..., applied to u(k - nk).
 *
 * Complex numbers are `{ re, im }`. T is always the sample period in seconds, and every model
 * object carries its own T; combining models of different T throws `PeriodMismatchError`.
 */
export interface Complex {
  re: number;
  im: number;
}

/** Location of a pole in the z-plane (stability is reported separately). */
export type PoleKind = "origin" | "positive-real" | "negative-real" | "complex" | "integrator";

/** A continuous transfer function num(s)/den(s), coefficients in descending powers of s. */
export interface ContinuousTf {
  num: number[];
  den: number[];
}

/** A discrete transfer function in descending powers of z, sampled at T seconds. */
export interface DiscreteTf {
  num: number[];
  den: number[];
  T: number;
}

/** A discrete transfer function in ascending powers of q^-1, sampled at T seconds. */
export interface QTf {
  num: number[];
  den: number[];
  T: number;
}

/** An ARX model A(q) y(k) = B(q) u(k - nk) + e(k) at sample period T seconds. */
export interface ArxModel {
  a: number[];
  b: number[];
  nk: number;
  T: number;
}

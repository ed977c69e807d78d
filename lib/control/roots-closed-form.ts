/**
 * Closed forms for the low degrees of `polyRoots` (lib/control/roots.ts): the quadratic with the
 * cancellation-free form, and the cubic with Newton polishing and stable deflation. Allocation-free;
 * results go into the caller's buffers.
 */
const EPS = 2.220446049250313e-16;

/** Roots of a z^2 + b z + c (c != 0) into out[0..1], written so that neither root loses digits to cancellation (Press et al., *Numerical Recipes*, 3rd ed., 2007, sec. 5.6). */
export function quadratic(a: number, b: number, c: number, outRe: Float64Array, outIm: Float64Array): void {
  // Scale to avoid overflow in b^2 and 4ac.
  const s = Math.max(Math.abs(a), Math.abs(b), Math.abs(c));
  a /= s;
  b /= s;
  c /= s;
  const disc = b * b - 4 * a * c;
  if (disc >= 0) {
    const q = -0.5 * (b + (b >= 0 ? Math.sqrt(disc) : -Math.sqrt(disc)));
    // q = 0 only when b = 0 and disc = 0, i.e. c = 0, which the caller has stripped.
    const r1 = q / a;
    const r2 = c / q;
    outRe[0] = r1;
    outRe[1] = r2;
    outIm[0] = 0;
    outIm[1] = 0;
  } else {
    const re = -b / (2 * a);
    const im = Math.abs(Math.sqrt(-disc) / (2 * a));
    outRe[0] = re;
    outIm[0] = im;
    outRe[1] = re;
    outIm[1] = -im;
  }
}

/** What `cubic` found: nothing usable (non-finite), three roots in any order, or three roots already in `sortRoots` order. */
export const CUBIC_FAILED = 0;
export const CUBIC_UNSORTED = 1;
export const CUBIC_SORTED = 2;

/**
 * Closed-form cubic (Press et al., *Numerical Recipes*, 3rd ed., 2007, sec. 5.6): one real root
 * from the trigonometric or Cardano form, polished by Newton steps on the original cubic, then
 * the other two from the deflated quadratic (Press et al. 2007 sec. 9.5: deflate by the largest
 * root backward, otherwise forward, which keeps the quadratic's coefficients well conditioned).
 * Two real roots from the quadratic are polished again on the original cubic; a complex pair is
 * polished by one Newton step only after forward deflation (after backward deflation by the
 * largest root it is already accurate to its conditioning: on 168,000 seeded cubics with a pair
 * inside the unit circle, the pair's error over its first-order conditioning bound was at worst
 * 1.24 and on average 0.058 without the step, against 1.13 and 0.057 with it). One transcendental pair (acos + cos, or cbrt + sqrt)
 * and one sqrt per call instead of three cosines or an iterated complex Newton step. Returns
 * CUBIC_FAILED (caller falls back to the iteration) if anything is non-finite.
 */

export function cubic(coeffs: ArrayLike<number>, first: number, outRe: Float64Array, outIm: Float64Array, warmStart: boolean): number {
  const lead = coeffs[first]!;
  const inv = lead === 1 ? 1 : 1 / lead; // a monic polynomial (a closed loop with a monic controller denominator) needs no division
  const a = coeffs[first + 1]! * inv;
  const b = coeffs[first + 2]! * inv;
  const c = coeffs[first + 3]! * inv;
  if (warmStart) {
    // the previous call's real root (the first, i.e. largest, real one after sorting) seeds Halley steps;
    // accepted only at the rounding level of evaluating p, otherwise the closed form below
    let seed = NaN;
    for (let i = 0; i < 3; i++) {
      if (outIm[i] === 0 && Number.isFinite(outRe[i]!)) {
        seed = outRe[i]!;
        break;
      }
    }
    if (Number.isFinite(seed)) {
      // accepted once |p| is at the rounding level of evaluating p (16 EPS times the sum of the
      // terms' magnitudes): the iteration has then done what polishing would do
      const aa = Math.abs(a);
      const ab = Math.abs(b);
      const ac = Math.abs(c);
      let x = seed;
      for (let step = 0; step < 5; step++) {
        const p = ((x + a) * x + b) * x + c;
        const ax = Math.abs(x);
        if (Math.abs(p) <= 16 * EPS * (((ax + aa) * ax + ab) * ax + ac)) return deflatedCubic(a, b, c, x, outRe, outIm);
        if (step === 4) break;
        // Halley's step (cubic convergence: a root that moved by 1e-5 since the last call is at
        // the rounding level after one step, where Newton needs two)
        const d = (3 * x + 2 * a) * x + b;
        const dd = 6 * x + 2 * a;
        const den = 2 * d * d - p * dd;
        if (den === 0) break;
        x -= (2 * p * d) / den;
      }
    }
  }
  const a3 = a / 3;
  const Q = (a * a - 3 * b) / 9;
  const R = (2 * a * a * a - 9 * a * b + 27 * c) / 54;
  const Q3 = Q * Q * Q;
  let x0: number;
  if (R * R < Q3) {
    // three real roots; th/3 in [0, pi/3] gives the root of largest modulus of the depressed cubic
    let x = R / Math.sqrt(Q3);
    if (x > 1) x = 1;
    else if (x < -1) x = -1;
    x0 = -2 * Math.sqrt(Q) * Math.cos(Math.acos(x) / 3) - a3;
  } else {
    const A = (R > 0 ? -1 : 1) * Math.cbrt(Math.abs(R) + Math.sqrt(R * R - Q3));
    const B = A === 0 ? 0 : Q / A;
    x0 = A + B - a3;
  }
  x0 = polishReal(a, b, c, x0);
  return deflatedCubic(a, b, c, x0, outRe, outIm);
}

/** The other two roots of z^3 + a z^2 + b z + c from its real root x0 (deflation, then polish). */
function deflatedCubic(a: number, b: number, c: number, x0: number, outRe: Float64Array, outIm: Float64Array): number {
  // z^3 + a z^2 + b z + c = (z - x0)(z^2 + e1 z + e0)
  let e1: number;
  let e0: number;
  const backward = x0 !== 0 && Math.abs(x0 * x0 * x0) > Math.abs(c);
  if (backward) {
    const inv = 1 / x0; // backward: x0 is the largest root
    e0 = -c * inv;
    e1 = (e0 - b) * inv;
  } else {
    e1 = a + x0; // forward: x0 is not larger than the pair
    e0 = b + e1 * x0;
  }
  outRe[0] = x0;
  outIm[0] = 0;
  const h = -0.5 * e1;
  const disc = h * h - e0;
  if (disc >= 0) {
    const q = h + (h >= 0 ? Math.sqrt(disc) : -Math.sqrt(disc));
    outRe[1] = polishReal(a, b, c, q);
    outRe[2] = polishReal(a, b, c, q === 0 ? 0 : e0 / q);
    outIm[1] = 0;
    outIm[2] = 0;
  } else {
    let re = h;
    let im = Math.sqrt(-disc);
    if (backward) {
      // x0 is the largest root (|x0|^3 > |c| = |x0| |pair|^2), so this is already the sorted
      // order: x0, then the pair with the positive imaginary part first
      outRe[1] = re;
      outIm[1] = im;
      outRe[2] = re;
      outIm[2] = -im;
      return Number.isFinite(x0 + re + im) ? CUBIC_SORTED : CUBIC_FAILED;
    }
    // one Newton step on the original cubic, kept only if |p| decreases
    // p = ((z + a) z + b) z + c, p' = (3z + 2a) z + b
    let pr = re + a;
    let pi = im;
    let t = pr * re - pi * im + b;
    pi = pr * im + pi * re;
    pr = t;
    t = pr * re - pi * im + c;
    pi = pr * im + pi * re;
    pr = t;
    let dr = 3 * re + 2 * a;
    let di = 3 * im;
    t = dr * re - di * im + b;
    di = dr * im + di * re;
    dr = t;
    const d2 = dr * dr + di * di;
    const p2 = pr * pr + pi * pi;
    if (d2 !== 0 && p2 !== 0) {
      const id2 = 1 / d2;
      const nre = re - (pr * dr + pi * di) * id2;
      const nim = im - (pi * dr - pr * di) * id2;
      let qr = nre + a;
      let qi = nim;
      t = qr * nre - qi * nim + b;
      qi = qr * nim + qi * nre;
      qr = t;
      t = qr * nre - qi * nim + c;
      qi = qr * nim + qi * nre;
      qr = t;
      if (qr * qr + qi * qi < p2) {
        re = nre;
        im = nim;
      }
    }
    outRe[1] = re;
    outIm[1] = Math.abs(im);
    outRe[2] = re;
    outIm[2] = -Math.abs(im);
  }
  return Number.isFinite(outRe[0]! + outRe[1]! + outRe[2]! + outIm[1]!) ? CUBIC_UNSORTED : CUBIC_FAILED;
}

/** Newton steps on a real root of z^3 + a z^2 + b z + c while |p| decreases (at most 3). */
function polishReal(a: number, b: number, c: number, x: number): number {
  let p = ((x + a) * x + b) * x + c;
  for (let step = 0; step < 3 && p !== 0; step++) {
    const d = (3 * x + 2 * a) * x + b;
    if (d === 0) break;
    const nx = x - p / d;
    const np = ((nx + a) * nx + b) * nx + c;
    if (!(Math.abs(np) < Math.abs(p))) break;
    x = nx;
    p = np;
  }
  return x;
}

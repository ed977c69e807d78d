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
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import type { Complex } from "./types";

const EPS = 2.220446049250313e-16;
const MAX_ITERATIONS = 200;
/**
 * Backward-error stop: |p(z)| <= (2 m + 2) eps sum |a_k| |z|^k, the rounding-error bound of Horner's
 * rule for degree m (Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed., 2002, sec. 5.1).
 */
const STOP_FACTOR_PER_DEGREE = 2;

// Scratch buffers, grown on demand; the per-call path allocates nothing once they are large enough.
let cap = 0;
let work = new Float64Array(0); // scaled monic coefficients, descending, length m + 1
let zr = new Float64Array(0);
let zi = new Float64Array(0);
let done = new Uint8Array(0);
let hullIdx = new Int32Array(0);
let logAbs = new Float64Array(0);
let okR = new Float64Array(0); // last position of each root that passed the stop test
let okI = new Float64Array(0);
let hasOk = new Uint8Array(0);

function ensureCapacity(n: number): void {
  if (n <= cap) return;
  cap = Math.max(n, 2 * cap, 16);
  work = new Float64Array(cap + 1);
  zr = new Float64Array(cap);
  zi = new Float64Array(cap);
  done = new Uint8Array(cap);
  hullIdx = new Int32Array(cap + 1);
  logAbs = new Float64Array(cap + 1);
  okR = new Float64Array(cap);
  okI = new Float64Array(cap);
  hasOk = new Uint8Array(cap);
}

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
  let first = -1;
  for (let i = 0; i < length; i++) {
    const c = coeffs[i]!;
    if (!Number.isFinite(c)) throw new NonFiniteInputError(`polynomial coefficient ${i}`);
    if (first < 0 && c !== 0) first = i;
  }
  if (first < 0) throw new ControlArgumentError("polyRoots: the zero polynomial has no isolated roots");
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

function quadratic(a: number, b: number, c: number, outRe: Float64Array, outIm: Float64Array): void {
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

function aberth(
  coeffs: ArrayLike<number>,
  first: number,
  m: number,
  outRe: Float64Array,
  outIm: Float64Array,
  warmStart: boolean,
): void {
  ensureCapacity(m);
  const lead = coeffs[first]!;
  // Scale z = rho w with rho a power of two near |a_m / a_0|^(1/m) (exact scaling).
  const geo = Math.pow(Math.abs(coeffs[first + m]! / lead), 1 / m);
  const rho = Math.pow(2, Math.round(Math.log2(geo)));
  let f = 1;
  for (let k = 0; k <= m; k++) {
    work[k] = coeffs[first + k]! / lead / f;
    f *= rho;
  }
  let warm = warmStart;
  if (warm) {
    for (let i = 0; i < m; i++) {
      const x = outRe[i]!;
      const y = outIm[i]!;
      if (!Number.isFinite(x) || !Number.isFinite(y) || (x === 0 && y === 0)) {
        warm = false;
        break;
      }
      // Rotate by a small, root-specific angle: breaks conjugate symmetry and separates equal seeds.
      const ang = (1e-3 * (i + 1)) / m;
      const c = Math.cos(ang);
      const sn = Math.sin(ang);
      zr[i] = (x * c - y * sn) / rho;
      zi[i] = (x * sn + y * c) / rho;
    }
  }
  if (!warm) initialGuesses(m);
  for (let i = 0; i < m; i++) {
    done[i] = 0;
    hasOk[i] = 0;
  }
  let remaining = m;
  const stop = STOP_FACTOR_PER_DEGREE * (m + 1) * EPS;
  // Once every root has met the stop test, one more full sweep (all roots corrected): in a tight
  // cluster the stop test is met anywhere in the pseudo-zero region, and one more simultaneous
  // correction moves the cluster's members apart toward the exact roots (measured: errors against
  // 50-digit roots of clustered polynomials near z = 1 typically halve).
  let finalSweep = true;
  for (let iter = 0; iter < MAX_ITERATIONS && (remaining > 0 || finalSweep); iter++) {
    if (remaining === 0) {
      finalSweep = false;
      for (let i = 0; i < m; i++) done[i] = 0;
      remaining = m;
    }
    for (let i = 0; i < m; i++) {
      if (done[i]) continue;
      const x = zr[i]!;
      const y = zi[i]!;
      // Logarithmic derivative L = p'(z)/p(z) and the stop test.
      let lre: number;
      let lim: number;
      const mod2 = x * x + y * y;
      if (mod2 <= 1) {
        let pr = 0, pi = 0, dr = 0, di = 0, bound = 0;
        const az = Math.sqrt(mod2);
        for (let k = 0; k <= m; k++) {
          const ndr = dr * x - di * y + pr;
          di = dr * y + di * x + pi;
          dr = ndr;
          const npr = pr * x - pi * y + work[k]!;
          pi = pr * y + pi * x;
          pr = npr;
          bound = bound * az + Math.abs(work[k]!);
        }
        const pp = pr * pr + pi * pi;
        if (Math.sqrt(pp) <= stop * bound) {
          done[i] = 1;
          remaining--;
          okR[i] = x;
          okI[i] = y;
          hasOk[i] = 1;
          if (pp === 0) continue;
        }
        if (pp === 0) continue;
        // L = p'/p
        lre = (dr * pr + di * pi) / pp;
        lim = (di * pr - dr * pi) / pp;
      } else {
        // Reversed polynomial r(w) = w^m p(1/w); p'/p = w (m - w r'(w)/r(w)), w = 1/z (Bini 1996).
        const wr = x / mod2;
        const wi = -y / mod2;
        let pr = 0, pi = 0, dr = 0, di = 0, bound = 0;
        const aw = Math.sqrt(wr * wr + wi * wi);
        for (let k = m; k >= 0; k--) {
          const ndr = dr * wr - di * wi + pr;
          di = dr * wi + di * wr + pi;
          dr = ndr;
          const npr = pr * wr - pi * wi + work[k]!;
          pi = pr * wi + pi * wr;
          pr = npr;
          bound = bound * aw + Math.abs(work[k]!);
        }
        const pp = pr * pr + pi * pi;
        if (Math.sqrt(pp) <= stop * bound) {
          done[i] = 1;
          remaining--;
          okR[i] = x;
          okI[i] = y;
          hasOk[i] = 1;
          if (pp === 0) continue;
        }
        if (pp === 0) continue;
        // t = w r'/r
        const qre = (dr * pr + di * pi) / pp;
        const qim = (di * pr - dr * pi) / pp;
        const tre = wr * qre - wi * qim;
        const tim = wr * qim + wi * qre;
        const sre = m - tre;
        const sim = -tim;
        lre = wr * sre - wi * sim;
        lim = wr * sim + wi * sre;
      }
      // Aberth correction: delta = 1 / (L - sum_j 1/(z_i - z_j)).
      let sre = 0, sim = 0;
      for (let j = 0; j < m; j++) {
        if (j === i) continue;
        const ddr = x - zr[j]!;
        const ddi = y - zi[j]!;
        const d2 = ddr * ddr + ddi * ddi;
        if (d2 === 0) continue;
        sre += ddr / d2;
        sim -= ddi / d2;
      }
      const denr = lre - sre;
      const deni = lim - sim;
      const den2 = denr * denr + deni * deni;
      if (den2 === 0 || !Number.isFinite(den2)) continue;
      zr[i] = x - denr / den2;
      zi[i] = y + deni / den2;
    }
  }
  // The correction applied after a root met the stop test (and the final sweep) is not checked by
  // the loop; in a tight cluster it can throw a root out of the pseudo-zero region (seen: a root at
  // modulus 1.16 for a degree-8 cluster whose largest root is 1.007). Every root that fails the
  // test now goes back to its last position that passed it.
  for (let i = 0; i < m; i++) {
    if (hasOk[i] && !passesStop(m, zr[i]!, zi[i]!, stop)) {
      zr[i] = okR[i]!;
      zi[i] = okI[i]!;
    }
  }
  symmetrise(m);
  for (let i = 0; i < m; i++) {
    outRe[i] = zr[i]! * rho;
    outIm[i] = zi[i]! * rho;
  }
}

/** The stop test of `aberth` at z = x + iy on the scaled monic polynomial in `work`. */
function passesStop(m: number, x: number, y: number, stop: number): boolean {
  const mod2 = x * x + y * y;
  const inside = mod2 <= 1;
  const wr = inside ? x : x / mod2;
  const wi = inside ? y : -y / mod2;
  const aw = Math.sqrt(wr * wr + wi * wi);
  let pr = 0, pi = 0, bound = 0;
  for (let j = 0; j <= m; j++) {
    const c = work[inside ? j : m - j]!;
    const npr = pr * wr - pi * wi + c;
    pi = pr * wi + pi * wr;
    pr = npr;
    bound = bound * aw + Math.abs(c);
  }
  return Math.sqrt(pr * pr + pi * pi) <= stop * bound;
}

/**
 * Starting points on circles whose radii come from the upper convex hull of (k, log|a_k|)
 * (Newton polygon; Bini 1996, sec. 4), with the coefficients of w^k in ascending k.
 */
function initialGuesses(m: number): void {
  for (let k = 0; k <= m; k++) {
    const a = Math.abs(work[m - k]!); // coefficient of w^k
    logAbs[k] = a === 0 ? -Infinity : Math.log(a);
  }
  let h = 0;
  for (let k = 0; k <= m; k++) {
    if (logAbs[k] === -Infinity) continue;
    while (h >= 2) {
      const i0 = hullIdx[h - 2]!;
      const i1 = hullIdx[h - 1]!;
      // Remove i1 when it lies on or below the segment i0 -> k (keep the upper hull).
      const cross = (i1 - i0) * (logAbs[k]! - logAbs[i0]!) - (k - i0) * (logAbs[i1]! - logAbs[i0]!);
      if (cross >= 0) h--;
      else break;
    }
    hullIdx[h++] = k;
  }
  const sigma = 0.7;
  let idx = 0;
  for (let s = 0; s + 1 < h; s++) {
    const k0 = hullIdx[s]!;
    const k1 = hullIdx[s + 1]!;
    const count = k1 - k0;
    const radius = Math.exp((logAbs[k0]! - logAbs[k1]!) / count);
    for (let j = 0; j < count; j++) {
      const ang = (2 * Math.PI * j) / count + (2 * Math.PI * s) / m + sigma;
      zr[idx] = radius * Math.cos(ang);
      zi[idx] = radius * Math.sin(ang);
      idx++;
    }
  }
}

/**
 * Makes the root set exactly closed under conjugation (real input): each root with positive
 * imaginary part is paired with the nearest unpaired root with negative imaginary part when their
 * distance (to the conjugate) is below the imaginary part, and both are replaced by the pair's mean;
 * roots left unpaired are real up to rounding and get imaginary part 0.
 */
function symmetrise(m: number): void {
  for (let i = 0; i < m; i++) done[i] = 0;
  for (;;) {
    let best = -1;
    let bestIm = 0;
    for (let i = 0; i < m; i++) {
      if (!done[i] && zi[i]! > bestIm) {
        best = i;
        bestIm = zi[i]!;
      }
    }
    if (best < 0) break;
    done[best] = 1;
    let partner = -1;
    let dist = Infinity;
    for (let j = 0; j < m; j++) {
      if (done[j] || zi[j]! >= 0) continue;
      const dx = zr[j]! - zr[best]!;
      const dy = zi[j]! + zi[best]!;
      const d = Math.sqrt(dx * dx + dy * dy);
      if (d < dist) {
        dist = d;
        partner = j;
      }
    }
    if (partner >= 0 && dist < Math.max(zi[best]!, -zi[partner]!)) {
      done[partner] = 1;
      const re = 0.5 * (zr[best]! + zr[partner]!);
      const im = 0.5 * (zi[best]! - zi[partner]!);
      zr[best] = re;
      zi[best] = im;
      zr[partner] = re;
      zi[partner] = -im;
    } else {
      zi[best] = 0;
    }
  }
  for (let i = 0; i < m; i++) if (!done[i]) zi[i] = 0;
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

/** What `cubic` found: nothing usable (non-finite), three roots in any order, or three roots already in `sortRoots` order. */
const CUBIC_FAILED = 0;
const CUBIC_UNSORTED = 1;
const CUBIC_SORTED = 2;

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

function cubic(coeffs: ArrayLike<number>, first: number, outRe: Float64Array, outIm: Float64Array, warmStart: boolean): number {
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

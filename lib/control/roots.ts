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
import { cubic, CUBIC_FAILED, CUBIC_UNSORTED, quadratic } from "./roots-closed-form";
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

/**
 * The Aberth–Ehrlich simultaneous iteration of `polyRoots` (roots.ts) for degree >= 3: O. Aberth,
 * *Iteration methods for finding all zeros of a polynomial simultaneously*, Math. Comp. 27, 1973,
 * with the refinements of D. A. Bini, *Numerical computation of polynomial zeros by means of
 * Aberth's method*, Numer. Algorithms 13, 1996 (Newton-polygon starting points, the reversed
 * polynomial beyond the unit circle, a per-root backward-error stop). Allocation-free once its
 * scratch buffers have grown to the degree in use.
 */

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
const hp = new Float64Array(5); // Horner results: p re, p im, p' re, p' im, rounding bound

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
 * The m roots of the polynomial coeffs[first..first + m] (descending, no zero roots), written to
 * `outRe`/`outIm`; `warmStart`: seeded from the roots already there (see `polyRootsInto`).
 */
export function aberth(
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
      // Logarithmic derivative L = p'(z)/p(z) and the stop test; beyond the unit circle through the
      // reversed polynomial r(w) = w^m p(1/w), p'/p = w (m - w r'(w)/r(w)), w = 1/z (Bini 1996).
      const mod2 = x * x + y * y;
      const inside = mod2 <= 1;
      const wr = inside ? x : x / mod2;
      const wi = inside ? y : -y / mod2;
      horner(m, inside, wr, wi);
      const pr = hp[0]!, pi = hp[1]!, dr = hp[2]!, di = hp[3]!;
      const pp = pr * pr + pi * pi;
      if (Math.sqrt(pp) <= stop * hp[4]!) {
        done[i] = 1;
        remaining--;
        okR[i] = x;
        okI[i] = y;
        hasOk[i] = 1;
      }
      if (pp === 0) continue;
      // q = p'/p inside, w r'/r outside
      const qre = (dr * pr + di * pi) / pp;
      const qim = (di * pr - dr * pi) / pp;
      let lre = qre;
      let lim = qim;
      if (!inside) {
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
  horner(m, inside, inside ? x : x / mod2, inside ? y : -y / mod2);
  return Math.hypot(hp[0]!, hp[1]!) <= stop * hp[4]!;
}

/** Horner's rule with the derivative
 * at w = wr + i wi on the scaled monic polynomial in `work` (reversed when `!forward`): the value,
 * its derivative and the rounding bound's sum |a_k| |w|^k, written to `hp` (re, im, d re, d im, bound).
 */
function horner(m: number, forward: boolean, wr: number, wi: number): void {
  let pr = 0, pi = 0, dr = 0, di = 0, bound = 0;
  const aw = Math.sqrt(wr * wr + wi * wi);
  for (let j = 0; j <= m; j++) {
    const c = work[forward ? j : m - j]!;
    const ndr = dr * wr - di * wi + pr;
    di = dr * wi + di * wr + pi;
    dr = ndr;
    const npr = pr * wr - pi * wi + c;
    pi = pr * wi + pi * wr;
    pr = npr;
    bound = bound * aw + Math.abs(c);
  }
  hp[0] = pr;
  hp[1] = pi;
  hp[2] = dr;
  hp[3] = di;
  hp[4] = bound;
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

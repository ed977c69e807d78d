/**
 * Small dense linear algebra on row-major `Float64Array`s, for the identification code.
 * Matrices are n x n (or m x n) stored row by row: element (i, j) at index i * n + j.
 * Nothing here is on the per-sample path except `symmetrize`; the rest runs every N samples
 * or in batch fits.
 */
import { ControlArgumentError } from "./errors";

/** Copy the mean of (i, j) and (j, i) into both, in place (keeps a covariance symmetric). */
export function symmetrize(m: Float64Array, n: number): void {
  for (let i = 0; i < n; i++) {
    for (let j = i + 1; j < n; j++) {
      const v = 0.5 * (m[i * n + j]! + m[j * n + i]!);
      m[i * n + j] = v;
      m[j * n + i] = v;
    }
  }
}

/** Trace of an n x n matrix. */
export function trace(m: Float64Array, n: number): number {
  let s = 0;
  for (let i = 0; i < n; i++) s += m[i * n + i]!;
  return s;
}

/**
 * Eigenvalues of a real symmetric n x n matrix by the cyclic Jacobi method (Golub & Van Loan,
 * *Matrix Computations*, 4th ed., 2013, sec. 8.5). Returns them in ascending order. Intended for
 * small matrices (n up to ~20); the input is not modified.
 */
export function symmetricEigenvalues(m: Float64Array, n: number, maxSweeps = 60): Float64Array {
  const a = Float64Array.from(m.subarray(0, n * n));
  symmetrize(a, n);
  let frob = 0;
  for (let i = 0; i < n * n; i++) frob += a[i]! * a[i]!;
  if (frob === 0) return new Float64Array(n);
  for (let sweep = 0; sweep < maxSweeps; sweep++) {
    let off = 0;
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) off += a[i * n + j]! ** 2;
    // Converged when the off-diagonal mass is at rounding level of the whole matrix.
    if (off <= 1e-30 * frob) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = a[p * n + q]!;
        // An element below rounding of both diagonal entries is set to zero (no rotation needed).
        if (Math.abs(apq) <= 1e-17 * Math.sqrt(Math.abs(a[p * n + p]! * a[q * n + q]!)) || apq === 0) {
          a[p * n + q] = 0;
          a[q * n + p] = 0;
          continue;
        }
        const app = a[p * n + p]!;
        const aqq = a[q * n + q]!;
        const theta = (aqq - app) / (2 * apq);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          const akp = a[k * n + p]!;
          const akq = a[k * n + q]!;
          a[k * n + p] = c * akp - s * akq;
          a[k * n + q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = a[p * n + k]!;
          const aqk = a[q * n + k]!;
          a[p * n + k] = c * apk - s * aqk;
          a[q * n + k] = s * apk + c * aqk;
        }
      }
    }
  }
  const ev = new Float64Array(n);
  for (let i = 0; i < n; i++) ev[i] = a[i * n + i]!;
  return ev.sort();
}

/**
 * Least-squares solution of min ||X b - y|| for an m x n matrix X (m >= n, row-major) by
 * Householder QR (Golub & Van Loan 2013, sec. 5.3), which avoids squaring the condition number
 * as the normal equations would. Also returns R^-1 R^-T = (X'X)^-1 for parameter covariances.
 * Throws `ControlArgumentError` when X is rank deficient (a pivot below 1e-12 of the largest).
 */
export function leastSquares(
  x: Float64Array,
  y: Float64Array,
  m: number,
  n: number,
): { beta: Float64Array; residual: Float64Array; xtxInverse: Float64Array } {
  if (m < n) throw new ControlArgumentError(`least squares needs at least as many rows (${m}) as unknowns (${n})`);
  const a = Float64Array.from(x.subarray(0, m * n));
  const b = Float64Array.from(y.subarray(0, m));
  const v = new Float64Array(m);
  let maxDiag = 0;
  for (let k = 0; k < n; k++) {
    let norm = 0;
    for (let i = k; i < m; i++) norm += a[i * n + k]! ** 2;
    norm = Math.sqrt(norm);
    if (norm === 0) throw new ControlArgumentError(`least squares: column ${k} is zero (rank deficient)`);
    const alpha = a[k * n + k]! > 0 ? -norm : norm;
    for (let i = k; i < m; i++) v[i] = a[i * n + k]!;
    v[k] = v[k]! - alpha;
    let vv = 0;
    for (let i = k; i < m; i++) vv += v[i]! ** 2;
    if (vv > 0) {
      for (let j = k; j < n; j++) {
        let s = 0;
        for (let i = k; i < m; i++) s += v[i]! * a[i * n + j]!;
        const f = (2 * s) / vv;
        for (let i = k; i < m; i++) a[i * n + j] = a[i * n + j]! - f * v[i]!;
      }
      let s = 0;
      for (let i = k; i < m; i++) s += v[i]! * b[i]!;
      const f = (2 * s) / vv;
      for (let i = k; i < m; i++) b[i] = b[i]! - f * v[i]!;
    }
    maxDiag = Math.max(maxDiag, Math.abs(a[k * n + k]!));
  }
  for (let k = 0; k < n; k++) {
    if (Math.abs(a[k * n + k]!) <= 1e-12 * maxDiag) {
      throw new ControlArgumentError(`least squares: regressors are (nearly) collinear at column ${k}; the data do not excite the model`);
    }
  }
  const beta = new Float64Array(n);
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i]!;
    for (let j = i + 1; j < n; j++) s -= a[i * n + j]! * beta[j]!;
    beta[i] = s / a[i * n + i]!;
  }
  // R^-1 (upper triangular), then (X'X)^-1 = R^-1 R^-T.
  const rinv = new Float64Array(n * n);
  for (let j = 0; j < n; j++) {
    rinv[j * n + j] = 1 / a[j * n + j]!;
    for (let i = j - 1; i >= 0; i--) {
      let s = 0;
      for (let k = i + 1; k <= j; k++) s += a[i * n + k]! * rinv[k * n + j]!;
      rinv[i * n + j] = -s / a[i * n + i]!;
    }
  }
  const xtxInverse = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = i; j < n; j++) {
      let s = 0;
      for (let k = j; k < n; k++) s += rinv[i * n + k]! * rinv[j * n + k]!;
      xtxInverse[i * n + j] = s;
      xtxInverse[j * n + i] = s;
    }
  }
  const residual = new Float64Array(m);
  for (let i = 0; i < m; i++) {
    let s = y[i]!;
    for (let j = 0; j < n; j++) s -= x[i * n + j]! * beta[j]!;
    residual[i] = s;
  }
  return { beta, residual, xtxInverse };
}

/** Convert a row-major n x n Float64Array to nested arrays. */
export function toNested(m: Float64Array, n: number): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < n; i++) out.push(Array.from(m.subarray(i * n, (i + 1) * n)));
  return out;
}

/** Convert nested arrays (n x n, checked) to a row-major Float64Array. */
export function fromNested(rows: readonly (readonly number[])[], n: number, what = "matrix"): Float64Array {
  if (rows.length !== n) throw new ControlArgumentError(`${what} must have ${n} rows, got ${rows.length}`);
  const out = new Float64Array(n * n);
  rows.forEach((row, i) => {
    if (row.length !== n) throw new ControlArgumentError(`${what} row ${i} must have ${n} entries, got ${row.length}`);
    row.forEach((v, j) => {
      out[i * n + j] = v;
    });
  });
  return out;
}

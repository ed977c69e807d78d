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
 * One Jacobi rotation of the cyclic Jacobi method (Golub & Van Loan, *Matrix Computations*, 4th
 * ed., 2013, algs. 8.5.1-8.5.2): a <- J' a J with J chosen to zero a(p, q) (nonzero), and v <- v J
 * when the eigenvectors are accumulated. `a` is symmetric n x n, row-major, modified in place.
 */
function rotateJacobi(a: Float64Array, n: number, p: number, q: number, v: Float64Array | null): void {
  const theta = (a[q * n + q]! - a[p * n + p]!) / (2 * a[p * n + q]!);
  const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
  const c = 1 / Math.sqrt(t * t + 1);
  const s = t * c;
  rotateColumns(a, n, p, q, c, s);
  for (let k = 0; k < n; k++) {
    const apk = a[p * n + k]!;
    const aqk = a[q * n + k]!;
    a[p * n + k] = c * apk - s * aqk;
    a[q * n + k] = s * apk + c * aqk;
  }
  if (v) rotateColumns(v, n, p, q, c, s);
}

/** Columns p and q of the row-major n x n `m` times the plane rotation [c s; -s c], in place. */
function rotateColumns(m: Float64Array, n: number, p: number, q: number, c: number, s: number): void {
  for (let k = 0; k < n; k++) {
    const mkp = m[k * n + p]!;
    const mkq = m[k * n + q]!;
    m[k * n + p] = c * mkp - s * mkq;
    m[k * n + q] = s * mkp + c * mkq;
  }
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
        rotateJacobi(a, n, p, q, null);
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

/**
 * V max(L, 0) V' of a symmetric row-major d x d matrix, by the cyclic Jacobi eigenvalue method
 * (Golub & Van Loan, *Matrix Computations*, 4th ed., 2013, sec. 8.5); small d only. A matrix with
 * a Cholesky factor (every pivot > 0, ibid. sec. 4.2) is positive definite and returned as it is.
 */
export function nearestPsd(S: Float64Array, d: number): Float64Array {
  const a = Float64Array.from(S);
  for (let i = 0; i < d; i++) for (let j = 0; j < i; j++) a[i * d + j] = a[j * d + i] = 0.5 * (a[i * d + j]! + a[j * d + i]!);
  if (choleskyPivotsPositive(a, d)) return a;
  const v = new Float64Array(d * d);
  for (let i = 0; i < d; i++) v[i * d + i] = 1;
  for (let sweep = 0; sweep < 50; sweep++) {
    let off = 0;
    let norm = 0;
    for (let i = 0; i < d; i++) {
      for (let j = 0; j < d; j++) {
        if (i === j) norm += a[i * d + j]! ** 2;
        else off += a[i * d + j]! ** 2;
      }
    }
    if (off <= 1e-30 * norm) break;
    for (let p = 0; p < d - 1; p++) {
      for (let q = p + 1; q < d; q++) {
        if (a[p * d + q] === 0) continue;
        rotateJacobi(a, d, p, q, v);
      }
    }
  }
  const out = new Float64Array(d * d);
  for (let k = 0; k < d; k++) {
    const lam = Math.max(0, a[k * d + k]!);
    if (lam === 0) continue;
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) out[i * d + j] = out[i * d + j]! + lam * v[i * d + k]! * v[j * d + k]!;
  }
  return out;
}

/** Whether the Cholesky factorisation of the symmetric a (row-major d x d) has every pivot > 0. */
function choleskyPivotsPositive(a: Float64Array, d: number): boolean {
  const L = new Float64Array(d * d);
  for (let j = 0; j < d; j++) {
    let p = a[j * d + j]!;
    for (let k = 0; k < j; k++) p -= L[j * d + k]! ** 2;
    if (!(p > 0)) return false;
    const ljj = Math.sqrt(p);
    L[j * d + j] = ljj;
    for (let i = j + 1; i < d; i++) {
      let s = a[i * d + j]!;
      for (let k = 0; k < j; k++) s -= L[i * d + k]! * L[j * d + k]!;
      L[i * d + j] = s / ljj;
    }
  }
  return true;
}

/** Inverse of a small d x d row-major matrix by Gauss-Jordan with partial pivoting; null if singular. */
export function invert(A: Float64Array, d: number): Float64Array | null {
  const w = 2 * d;
  const M = new Float64Array(d * w);
  let scale = 0;
  for (let i = 0; i < d; i++) {
    for (let j = 0; j < d; j++) {
      M[i * w + j] = A[i * d + j]!;
      scale = Math.max(scale, Math.abs(A[i * d + j]!));
    }
    M[i * w + d + i] = 1;
  }
  for (let c = 0; c < d; c++) {
    let p = c;
    for (let i = c + 1; i < d; i++) if (Math.abs(M[i * w + c]!) > Math.abs(M[p * w + c]!)) p = i;
    if (Math.abs(M[p * w + c]!) <= 1e-12 * scale) return null;
    if (p !== c) for (let j = 0; j < w; j++) {
      const t = M[c * w + j]!;
      M[c * w + j] = M[p * w + j]!;
      M[p * w + j] = t;
    }
    const piv = M[c * w + c]!;
    for (let j = 0; j < w; j++) M[c * w + j] = M[c * w + j]! / piv;
    for (let i = 0; i < d; i++) {
      if (i === c) continue;
      const m = M[i * w + c]!;
      if (m === 0) continue;
      for (let j = 0; j < w; j++) M[i * w + j] = M[i * w + j]! - m * M[c * w + j]!;
    }
  }
  const out = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) out[i * d + j] = M[i * w + d + j]!;
  return out;
}

/**
 * Solves A x = b for a small d x d row-major A by Gaussian elimination with partial pivoting, into
 * `x`, with `work` (length >= d (d + 1)) as scratch: no allocation (per-sample use). Returns the
 * pivot ratio |min pivot| / |max pivot| in (0, 1] (a conditioning indicator) when x is solved;
 * 0 when A is zero, not finite or (nearly) singular (a pivot at or below 1e-12 of its largest
 * entry); NaN when the solution is not finite. x is unspecified unless the result is > 0.
 */
export function solveInto(A: Float64Array, b: Float64Array, d: number, work: Float64Array, x: Float64Array): number {
  const M = work;
  const w = d + 1;
  let scale = 0;
  for (let i = 0; i < d; i++) {
    for (let j = 0; j < d; j++) {
      M[i * w + j] = A[i * d + j]!;
      scale = Math.max(scale, Math.abs(A[i * d + j]!));
    }
    M[i * w + d] = b[i]!;
  }
  if (!(scale > 0) || !Number.isFinite(scale)) return 0;
  let minPivot = Infinity;
  let maxPivot = 0;
  for (let c = 0; c < d; c++) {
    let p = c;
    for (let i = c + 1; i < d; i++) if (Math.abs(M[i * w + c]!) > Math.abs(M[p * w + c]!)) p = i;
    if (p !== c) {
      for (let j = c; j < w; j++) {
        const tmp = M[c * w + j]!;
        M[c * w + j] = M[p * w + j]!;
        M[p * w + j] = tmp;
      }
    }
    const piv = M[c * w + c]!;
    const ap = Math.abs(piv);
    minPivot = Math.min(minPivot, ap);
    maxPivot = Math.max(maxPivot, ap);
    if (ap <= 1e-12 * scale) return 0;
    for (let i = c + 1; i < d; i++) {
      const m = M[i * w + c]! / piv;
      if (m === 0) continue;
      for (let j = c; j < w; j++) M[i * w + j] = M[i * w + j]! - m * M[c * w + j]!;
    }
  }
  for (let i = d - 1; i >= 0; i--) {
    let s = M[i * w + d]!;
    for (let j = i + 1; j < d; j++) s -= M[i * w + j]! * x[j]!;
    x[i] = s / M[i * w + i]!;
  }
  for (let i = 0; i < d; i++) if (!Number.isFinite(x[i]!)) return NaN;
  return minPivot / maxPivot;
}

/** k M S M' for p x p row-major M, S. */
export function sandwich(M: Float64Array, S: Float64Array, p: number, k: number): Float64Array {
  const MS = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < p; j++) {
      let v = 0;
      for (let l = 0; l < p; l++) v += M[i * p + l]! * S[l * p + j]!;
      MS[i * p + j] = v;
    }
  }
  const out = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    for (let j = 0; j < p; j++) {
      let v = 0;
      for (let l = 0; l < p; l++) v += MS[i * p + l]! * M[j * p + l]!;
      out[i * p + j] = k * v;
    }
  }
  return out;
}

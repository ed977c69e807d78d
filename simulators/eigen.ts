/**
 * Eigenvalues of a real square matrix, for the simulators' true closed-loop poles (kept apart
 * from the product's polynomial root finder on purpose: the truth must not share code with what
 * it checks). Householder reduction to upper Hessenberg form, then the shifted double-step
 * Francis QR iteration with deflation (Wilkinson & Reinsch, *Handbook for Automatic
 * Computation II: Linear Algebra*, 1971, procedures orthes and hqr; the same algorithm as the
 * public-domain JAMA EigenvalueDecomposition).
 */
import type { Complex } from "@/lib/control/types";

export function eigenvalues(matrix: readonly (readonly number[])[]): Complex[] {
  const nn = matrix.length;
  if (nn === 0) return [];
  const H: number[][] = matrix.map((row, i) => {
    if (row.length !== nn) throw new RangeError(`matrix row ${i} has ${row.length} entries, expected ${nn}`);
    return row.map((v, j) => {
      if (!Number.isFinite(v)) throw new RangeError(`matrix[${i}][${j}] is not finite`);
      return v;
    });
  });
  orthes(H);
  return hqr(H);
}

function orthes(H: number[][]): void {
  const n = H.length;
  const low = 0;
  const high = n - 1;
  const ort = new Array<number>(n).fill(0);
  for (let m = low + 1; m <= high - 1; m++) {
    let scale = 0;
    for (let i = m; i <= high; i++) scale += Math.abs(H[i]![m - 1]!);
    if (scale === 0) continue;
    let h = 0;
    for (let i = high; i >= m; i--) {
      ort[i] = H[i]![m - 1]! / scale;
      h += ort[i]! * ort[i]!;
    }
    let g = Math.sqrt(h);
    if (ort[m]! > 0) g = -g;
    h -= ort[m]! * g;
    ort[m] = ort[m]! - g;
    for (let j = m; j < n; j++) {
      let f = 0;
      for (let i = high; i >= m; i--) f += ort[i]! * H[i]![j]!;
      f /= h;
      for (let i = m; i <= high; i++) H[i]![j] = H[i]![j]! - f * ort[i]!;
    }
    for (let i = 0; i <= high; i++) {
      let f = 0;
      for (let j = high; j >= m; j--) f += ort[j]! * H[i]![j]!;
      f /= h;
      for (let j = m; j <= high; j++) H[i]![j] = H[i]![j]! - f * ort[j]!;
    }
    ort[m] = scale * ort[m]!;
    H[m]![m - 1] = scale * g;
  }
}

function hqr(H: number[][]): Complex[] {
  const nn = H.length;
  const d = new Array<number>(nn).fill(0);
  const e = new Array<number>(nn).fill(0);
  const low = 0;
  const eps = 2 ** -52;
  let n = nn - 1;
  let exshift = 0;
  let p = 0;
  let q = 0;
  let r = 0;
  let s = 0;
  let z = 0;
  let w: number;
  let x: number;
  let y: number;
  let norm = 0;
  for (let i = 0; i < nn; i++) for (let j = Math.max(i - 1, 0); j < nn; j++) norm += Math.abs(H[i]![j]!);
  let iter = 0;
  let total = 0;
  const at = (i: number, j: number) => H[i]![j]!;
  const set = (i: number, j: number, v: number) => {
    H[i]![j] = v;
  };
  while (n >= low) {
    let l = n;
    while (l > low) {
      s = Math.abs(at(l - 1, l - 1)) + Math.abs(at(l, l));
      if (s === 0) s = norm;
      if (Math.abs(at(l, l - 1)) < eps * s) break;
      l--;
    }
    if (l === n) {
      set(n, n, at(n, n) + exshift);
      d[n] = at(n, n);
      e[n] = 0;
      n--;
      iter = 0;
    } else if (l === n - 1) {
      w = at(n, n - 1) * at(n - 1, n);
      p = (at(n - 1, n - 1) - at(n, n)) / 2;
      q = p * p + w;
      z = Math.sqrt(Math.abs(q));
      set(n, n, at(n, n) + exshift);
      set(n - 1, n - 1, at(n - 1, n - 1) + exshift);
      x = at(n, n);
      if (q >= 0) {
        z = p >= 0 ? p + z : p - z;
        d[n - 1] = x + z;
        d[n] = z !== 0 ? x - w / z : x + z;
        e[n - 1] = 0;
        e[n] = 0;
      } else {
        d[n - 1] = x + p;
        d[n] = x + p;
        e[n - 1] = z;
        e[n] = -z;
      }
      n -= 2;
      iter = 0;
    } else {
      x = at(n, n);
      y = 0;
      w = 0;
      if (l < n) {
        y = at(n - 1, n - 1);
        w = at(n, n - 1) * at(n - 1, n);
      }
      if (iter === 10) {
        // Wilkinson's exceptional shift
        exshift += x;
        for (let i = low; i <= n; i++) set(i, i, at(i, i) - x);
        s = Math.abs(at(n, n - 1)) + Math.abs(at(n - 1, n - 2));
        x = y = 0.75 * s;
        w = -0.4375 * s * s;
      }
      if (iter === 30) {
        s = (y - x) / 2;
        s = s * s + w;
        if (s > 0) {
          s = Math.sqrt(s);
          if (y < x) s = -s;
          s = x - w / ((y - x) / 2 + s);
          for (let i = low; i <= n; i++) set(i, i, at(i, i) - s);
          exshift += s;
          x = y = w = 0.964;
        }
      }
      iter++;
      total++;
      if (total > 100 * nn) throw new RangeError("eigenvalues: QR iteration did not converge");
      let m = n - 2;
      while (m >= l) {
        z = at(m, m);
        r = x - z;
        s = y - z;
        p = (r * s - w) / at(m + 1, m) + at(m, m + 1);
        q = at(m + 1, m + 1) - z - r - s;
        r = at(m + 2, m + 1);
        s = Math.abs(p) + Math.abs(q) + Math.abs(r);
        p /= s;
        q /= s;
        r /= s;
        if (m === l) break;
        if (Math.abs(at(m, m - 1)) * (Math.abs(q) + Math.abs(r)) < eps * (Math.abs(p) * (Math.abs(at(m - 1, m - 1)) + Math.abs(z) + Math.abs(at(m + 1, m + 1))))) break;
        m--;
      }
      for (let i = m + 2; i <= n; i++) {
        set(i, i - 2, 0);
        if (i > m + 2) set(i, i - 3, 0);
      }
      for (let k = m; k <= n - 1; k++) {
        const notlast = k !== n - 1;
        if (k !== m) {
          p = at(k, k - 1);
          q = at(k + 1, k - 1);
          r = notlast ? at(k + 2, k - 1) : 0;
          x = Math.abs(p) + Math.abs(q) + Math.abs(r);
          if (x === 0) continue;
          p /= x;
          q /= x;
          r /= x;
        }
        s = Math.sqrt(p * p + q * q + r * r);
        if (p < 0) s = -s;
        if (s !== 0) {
          if (k !== m) set(k, k - 1, -s * x);
          else if (l !== m) set(k, k - 1, -at(k, k - 1));
          p += s;
          x = p / s;
          y = q / s;
          z = r / s;
          q /= p;
          r /= p;
          for (let j = k; j < nn; j++) {
            p = at(k, j) + q * at(k + 1, j);
            if (notlast) {
              p += r * at(k + 2, j);
              set(k + 2, j, at(k + 2, j) - p * z);
            }
            set(k, j, at(k, j) - p * x);
            set(k + 1, j, at(k + 1, j) - p * y);
          }
          for (let i = 0; i <= Math.min(n, k + 3); i++) {
            p = x * at(i, k) + y * at(i, k + 1);
            if (notlast) {
              p += z * at(i, k + 2);
              set(i, k + 2, at(i, k + 2) - p * r);
            }
            set(i, k, at(i, k) - p);
            set(i, k + 1, at(i, k + 1) - p * q);
          }
        }
      }
    }
  }
  return d.map((re, i) => ({ re, im: e[i]! }));
}

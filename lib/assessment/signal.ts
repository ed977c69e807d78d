/**
 * Signal helpers for the assessment (typed arrays, no allocation in inner loops): the
 * autocovariance and cross-covariance by FFT of real sequences (Wiener–Khinchin; fft.ts), robust
 * noise sigma, Levinson–Durbin.
 */
import { nextPow2, realForward, realInverse, scratchOf } from "./fft";

export { fftInPlace } from "./fft";

/**
 * Writes x(i) - mean for i < n, zero-padded to length 2H, packed for realForward:
 * zr[j] = x(2j), zi[j] = x(2j+1).
 */
function packReal(x: ArrayLike<number>, n: number, mean: number, zr: Float64Array, zi: Float64Array): void {
  zr.fill(0);
  zi.fill(0);
  for (let i = 0; i + 1 < n; i += 2) {
    zr[i >> 1] = x[i]! - mean;
    zi[i >> 1] = x[i + 1]! - mean;
  }
  if (n % 2) zr[(n - 1) >> 1] = x[n - 1]! - mean;
}

/** Transform length for products up to lag `lags` of n samples without circular wrap (a power of two, at least 2). */
function paddedLength(n: number, lags: number): number {
  return Math.max(2, nextPow2(n + lags + 1));
}

/**
 * Biased autocovariance c(k) = (1/N) Σ x(t) x(t+k), k = 0..maxLag, of the mean-removed signal,
 * by FFT with zero padding (no circular wrap): the inverse transform of |X|², the transforms of a
 * real sequence (fft.ts). Equal to the direct sum to rounding (tests/assessment/signal.test.ts).
 */
export function autocovariance(x: ArrayLike<number>, maxLag: number): Float64Array {
  const n = x.length;
  const lags = Math.max(0, Math.min(maxLag, n - 1));
  let mean = 0;
  for (let i = 0; i < n; i++) mean += x[i]!;
  mean /= n || 1;
  const H = paddedLength(n, lags) >> 1;
  const zr = scratchOf(0, H);
  const zi = scratchOf(1, H);
  const pr = scratchOf(2, H + 1);
  const pi = scratchOf(3, H + 1);
  packReal(x, n, mean, zr, zi);
  realForward(zr, zi, pr, pi);
  for (let k = 0; k <= H; k++) pr[k] = pr[k]! * pr[k]! + pi[k]! * pi[k]!;
  realInverse(pr, null, zr, zi);
  const out = new Float64Array(lags + 1);
  for (let k = 0; k <= lags; k++) out[k] = (k % 2 ? zi : zr)[k >> 1]! / n;
  return out;
}

/** Autocorrelation r(k) = c(k)/c(0); all zeros for a constant signal. */
export function autocorrelation(x: ArrayLike<number>, maxLag: number): Float64Array {
  const c = autocovariance(x, maxLag);
  const c0 = c[0]!;
  if (!(c0 > 0)) return new Float64Array(c.length);
  for (let k = 0; k < c.length; k++) c[k] = c[k]! / c0;
  return c;
}

/** Biased cross-covariance c_xy(k) = (1/N) Σ x(t) y(t+k) for k = -maxLag..maxLag (index k + maxLag). */
export function crossCovariance(x: ArrayLike<number>, y: ArrayLike<number>, maxLag: number): Float64Array {
  const n = Math.min(x.length, y.length);
  const lags = Math.max(0, Math.min(maxLag, n - 1));
  let mx = 0;
  let my = 0;
  for (let i = 0; i < n; i++) {
    mx += x[i]!;
    my += y[i]!;
  }
  mx /= n || 1;
  my /= n || 1;
  const m = paddedLength(n, lags);
  const H = m >> 1;
  const zr = scratchOf(0, H);
  const zi = scratchOf(1, H);
  const xr = scratchOf(2, H + 1);
  const xi = scratchOf(3, H + 1);
  const yr = scratchOf(4, H + 1);
  const yi = scratchOf(5, H + 1);
  packReal(x, n, mx, zr, zi);
  realForward(zr, zi, xr, xi);
  packReal(y, n, my, zr, zi);
  realForward(zr, zi, yr, yi);
  // conj(X) * Y -> sum x(t) y(t+k)
  for (let k = 0; k <= H; k++) {
    const r = xr[k]! * yr[k]! + xi[k]! * yi[k]!;
    const im = xr[k]! * yi[k]! - xi[k]! * yr[k]!;
    xr[k] = r;
    xi[k] = im;
  }
  realInverse(xr, xi, zr, zi);
  const out = new Float64Array(2 * lags + 1);
  for (let k = -lags; k <= lags; k++) {
    const t = (k + m) % m;
    out[k + lags] = (t % 2 ? zi : zr)[t >> 1]! / n;
  }
  return out;
}

export function mean(x: ArrayLike<number>, from = 0, to = x.length): number {
  let s = 0;
  for (let i = from; i < to; i++) s += x[i]!;
  return to > from ? s / (to - from) : 0;
}

export function variance(x: ArrayLike<number>, from = 0, to = x.length): number {
  const m = mean(x, from, to);
  let s = 0;
  for (let i = from; i < to; i++) s += (x[i]! - m) ** 2;
  return to - from > 1 ? s / (to - from) : 0;
}

/** Median of a copy (NaN-free input). */
export function median(values: ArrayLike<number>): number {
  const a = Float64Array.from(values as ArrayLike<number>).sort();
  if (a.length === 0) return NaN;
  const h = a.length >> 1;
  return a.length % 2 ? a[h]! : (a[h - 1]! + a[h]!) / 2;
}

/**
 * Median by selection (Hoare's FIND, O(n)), reordering `a` in place: the same value as median()
 * except that a zero's sign may differ, which noiseSigma removes (it takes |d - med|).
 */
function selectMedian(a: Float64Array): number {
  const n = a.length;
  if (n === 0) return NaN;
  const h = n >> 1;
  let lo = 0;
  let hi = n - 1;
  while (lo < hi) {
    const pivot = a[(lo + hi) >> 1]!;
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i]! < pivot) i++;
      while (a[j]! > pivot) j--;
      if (i <= j) {
        const t = a[i]!;
        a[i++] = a[j]!;
        a[j--] = t;
      }
    }
    if (h <= j) hi = j;
    else if (h >= i) lo = i;
    else break;
  }
  if (n % 2) return a[h]!;
  // The largest of the lower half is the other middle value.
  let below = -Infinity;
  for (let k = 0; k < h; k++) if (a[k]! > below) below = a[k]!;
  return (below + a[h]!) / 2;
}

/**
 * Sigma of the fast (sample-to-sample) noise: 1.4826 MAD of first differences / √2, robust to
 * slow moves and steps (a common robust scale estimate; Hampel's MAD constant).
 */
export function noiseSigma(x: ArrayLike<number>): number {
  const n = x.length;
  if (n < 3) return 0;
  const d = new Float64Array(n - 1);
  for (let i = 1; i < n; i++) d[i - 1] = x[i]! - x[i - 1]!;
  const med = selectMedian(Float64Array.from(d));
  for (let i = 0; i < d.length; i++) d[i] = Math.abs(d[i]! - med);
  // On a copy: the fallback below sums d in its order.
  const mad = selectMedian(Float64Array.from(d));
  if (mad > 0) return (1.4826 * mad) / Math.SQRT2;
  // Most differences are zero (held or quantised data): fall back to the RMS difference.
  let s = 0;
  for (let i = 0; i < d.length; i++) s += d[i]! * d[i]!;
  return Math.sqrt(s / d.length) / Math.SQRT2;
}

/**
 * Levinson–Durbin recursion on autocovariances c(0..p): AR coefficients a1..ap of
 * x(t) + a1 x(t-1) + ... + ap x(t-p) = e(t) and the prediction-error variance per order
 * (Box, Jenkins & Reinsel, Time Series Analysis, Yule–Walker equations).
 */
export function levinson(c: ArrayLike<number>, p: number): { a: Float64Array; errorVariance: Float64Array } {
  const a = new Float64Array(p);
  const prev = new Float64Array(p);
  const ev = new Float64Array(p + 1);
  let err = c[0]!;
  ev[0] = err;
  for (let k = 1; k <= p; k++) {
    if (!(err > 0)) {
      for (let j = k; j <= p; j++) ev[j] = err;
      break;
    }
    let acc = c[k]!;
    for (let j = 1; j < k; j++) acc += a[j - 1]! * c[k - j]!;
    const refl = -acc / err;
    prev.set(a);
    for (let j = 1; j < k; j++) a[j - 1] = prev[j - 1]! + refl * prev[k - j - 1]!;
    a[k - 1] = refl;
    err *= 1 - refl * refl;
    ev[k] = err;
  }
  return { a, errorVariance: ev };
}

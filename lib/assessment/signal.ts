/**
 * Signal helpers for the assessment (typed arrays, no allocation in inner loops): an in-place
 * radix-2 FFT, the autocorrelation by FFT (Wiener–Khinchin), robust noise sigma, Levinson–Durbin.
 */

/**
 * Twiddle factors per stage, laid out by half-length h at offset h - 1 (k = 0..h-1), computed by
 * the same rotation recurrence the butterflies used to run inline, so the FFT's results are the
 * same to the last bit; shared by every transform size (a stage's factors depend on its length
 * only). Stages up to TWIDDLE_CACHE_HALF are cached (16 bytes per entry and direction).
 */
const TWIDDLE_CACHE_HALF = 1 << 15;
const twiddles: [{ re: Float64Array; im: Float64Array; half: number }, { re: Float64Array; im: Float64Array; half: number }] = [
  { re: new Float64Array(0), im: new Float64Array(0), half: 0 },
  { re: new Float64Array(0), im: new Float64Array(0), half: 0 },
];

function fillStage(re: Float64Array, im: Float64Array, offset: number, half: number, inverse: boolean): void {
  const ang = ((inverse ? 2 : -2) * Math.PI) / (2 * half);
  const wr = Math.cos(ang);
  const wi = Math.sin(ang);
  let cr = 1;
  let ci = 0;
  for (let k = 0; k < half; k++) {
    re[offset + k] = cr;
    im[offset + k] = ci;
    const ncr = cr * wr - ci * wi;
    ci = cr * wi + ci * wr;
    cr = ncr;
  }
}

/** Cached twiddles for stages with half-length up to `maxHalf` (a power of two, at most TWIDDLE_CACHE_HALF). */
function twiddlesUpTo(maxHalf: number, inverse: boolean): { re: Float64Array; im: Float64Array } {
  const t = twiddles[inverse ? 1 : 0];
  if (t.half >= maxHalf) return t;
  const re = new Float64Array(2 * maxHalf - 1);
  const im = new Float64Array(2 * maxHalf - 1);
  re.set(t.re);
  im.set(t.im);
  for (let half = Math.max(1, 2 * t.half); half <= maxHalf; half <<= 1) fillStage(re, im, half - 1, half, inverse);
  t.re = re;
  t.im = im;
  t.half = maxHalf;
  return t;
}

/** In-place iterative radix-2 FFT (Cooley–Tukey); re/im length must be a power of two. */
export function fftInPlace(re: Float64Array, im: Float64Array, inverse = false): void {
  const n = re.length;
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1;
    for (; j & bit; bit >>= 1) j ^= bit;
    j ^= bit;
    if (i < j) {
      let t = re[i]!;
      re[i] = re[j]!;
      re[j] = t;
      t = im[i]!;
      im[i] = im[j]!;
      im[j] = t;
    }
  }
  const cached = twiddlesUpTo(Math.min(n >> 1, TWIDDLE_CACHE_HALF), inverse);
  let wre = cached.re;
  let wim = cached.im;
  for (let len = 2; len <= n; len <<= 1) {
    const half = len >> 1;
    let off = half - 1;
    if (half > TWIDDLE_CACHE_HALF) {
      // A stage too long to keep: its factors for this call only.
      wre = new Float64Array(half);
      wim = new Float64Array(half);
      fillStage(wre, wim, 0, half, inverse);
      off = 0;
    }
    for (let i = 0; i < n; i += len) {
      for (let k = 0; k < half; k++) {
        const cr = wre[off + k]!;
        const ci = wim[off + k]!;
        const a = i + k;
        const b = a + half;
        const br = re[b]!;
        const bi = im[b]!;
        const xr = br * cr - bi * ci;
        const xi = br * ci + bi * cr;
        const ar = re[a]!;
        const ai = im[a]!;
        re[b] = ar - xr;
        im[b] = ai - xi;
        re[a] = ar + xr;
        im[a] = ai + xi;
      }
    }
  }
  if (inverse) {
    for (let i = 0; i < n; i++) {
      re[i] = re[i]! / n;
      im[i] = im[i]! / n;
    }
  }
}

/**
 * Scratch arrays for the transforms, reused across calls (JS runs one call at a time); each call
 * zeroes what it reads. Kept up to 2^16 points (2 MB for the four); longer ones are allocated per call.
 */
const SCRATCH_MAX = 1 << 16;
const scratch: Float64Array[] = [];

function scratchOf(slot: number, m: number): Float64Array {
  if (m > SCRATCH_MAX) return new Float64Array(m);
  let a = scratch[slot];
  if (!a || a.length < m) scratch[slot] = a = new Float64Array(Math.max(m, 2 * (a?.length ?? 0)));
  return a.length === m ? a : a.subarray(0, m);
}

function nextPow2(n: number): number {
  let p = 1;
  while (p < n) p <<= 1;
  return p;
}

/**
 * Biased autocovariance c(k) = (1/N) Σ x(t) x(t+k), k = 0..maxLag, of the mean-removed signal,
 * by FFT with zero padding (no circular wrap).
 */
export function autocovariance(x: ArrayLike<number>, maxLag: number): Float64Array {
  const n = x.length;
  const lags = Math.max(0, Math.min(maxLag, n - 1));
  let mean = 0;
  for (let i = 0; i < n; i++) mean += x[i]!;
  mean /= n || 1;
  const m = nextPow2(n + lags + 1);
  const re = scratchOf(0, m);
  const im = scratchOf(1, m).fill(0);
  for (let i = 0; i < n; i++) re[i] = x[i]! - mean;
  re.fill(0, n);
  fftInPlace(re, im);
  for (let i = 0; i < m; i++) {
    re[i] = re[i]! * re[i]! + im[i]! * im[i]!;
    im[i] = 0;
  }
  fftInPlace(re, im, true);
  const out = new Float64Array(lags + 1);
  for (let k = 0; k <= lags; k++) out[k] = re[k]! / n;
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
  const m = nextPow2(n + lags + 1);
  const ar = scratchOf(0, m);
  const ai = scratchOf(1, m).fill(0);
  const br = scratchOf(2, m);
  const bi = scratchOf(3, m).fill(0);
  for (let i = 0; i < n; i++) {
    ar[i] = x[i]! - mx;
    br[i] = y[i]! - my;
  }
  ar.fill(0, n);
  br.fill(0, n);
  fftInPlace(ar, ai);
  fftInPlace(br, bi);
  // conj(X) * Y -> sum x(t) y(t+k)
  for (let i = 0; i < m; i++) {
    const r = ar[i]! * br[i]! + ai[i]! * bi[i]!;
    const im = ar[i]! * bi[i]! - ai[i]! * br[i]!;
    ar[i] = r;
    ai[i] = im;
  }
  fftInPlace(ar, ai, true);
  const out = new Float64Array(2 * lags + 1);
  for (let k = -lags; k <= lags; k++) out[k + lags] = ar[(k + m) % m]! / n;
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

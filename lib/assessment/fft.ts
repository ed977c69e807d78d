/**
 * Fast Fourier transforms for the assessment (typed arrays, no allocation in inner loops): an
 * in-place radix-2 complex FFT, and the transform of a real sequence of length N = 2H by one
 * complex FFT of length H (and back), which halves the work of the autocovariances and spectra of
 * real signals.
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
 * zeroes what it reads. Kept up to 2^16 points per slot (0.5 MB each); longer ones are allocated per call.
 */
const SCRATCH_MAX = 1 << 16;
const scratch: Float64Array[] = [];

export function scratchOf(slot: number, m: number): Float64Array {
  if (m > SCRATCH_MAX) return new Float64Array(m);
  let a = scratch[slot];
  if (!a || a.length < m) scratch[slot] = a = new Float64Array(Math.min(SCRATCH_MAX, Math.max(m, 2 * (a?.length ?? 0))));
  return a.length === m ? a : a.subarray(0, m);
}

export function nextPow2(n: number): number {
  let p = 1;
  while (p < n) p <<= 1;
  return p;
}


/**
 * cos and sin of 2πk/N for k = 0..N/2, per transform length N (a few lengths in use; computed
 * directly, not by recurrence). Kept up to N = 2^18 (a day at 1 s with its lags: 4 MB at most
 * for all lengths together).
 */
const HALF_TURNS_MAX = 1 << 18;
const halfTurns = new Map<number, { cos: Float64Array; sin: Float64Array }>();

function halfTurnsOf(N: number): { cos: Float64Array; sin: Float64Array } {
  let t = halfTurns.get(N);
  if (!t) {
    const H = N >> 1;
    t = { cos: new Float64Array(H + 1), sin: new Float64Array(H + 1) };
    for (let k = 0; k <= H; k++) {
      t.cos[k] = Math.cos((2 * Math.PI * k) / N);
      t.sin[k] = Math.sin((2 * Math.PI * k) / N);
    }
    if (N <= HALF_TURNS_MAX) halfTurns.set(N, t);
  }
  return t;
}

/**
 * The spectrum X(k) = Σ x(t) e^{-2πikt/N}, k = 0..H, of a real sequence x of length N = 2H, given
 * packed as one complex sequence of length H: zr[j] = x(2j), zi[j] = x(2j+1). One complex FFT of
 * length H gives Z; the transforms of the even and odd samples are (Z(k) + Z*(H-k))/2 and
 * (Z(k) - Z*(H-k))/2i, and X(k) = E(k) + e^{-2πik/N} O(k) (the packing of a real sequence into a
 * complex one of half the length: common practice, e.g. Press et al., Numerical Recipes, "FFT of
 * real functions"; from memory). zr/zi (length H, H a power of two) are overwritten; the bins go
 * to outRe/outIm (length at least H + 1; the others are X(N-k) = X*(k)).
 */
export function realForward(zr: Float64Array, zi: Float64Array, outRe: Float64Array, outIm: Float64Array): void {
  const H = zr.length;
  fftInPlace(zr, zi);
  const { cos, sin } = halfTurnsOf(2 * H);
  for (let k = 0; k <= H; k++) {
    const a = zr[k % H]!;
    const b = zi[k % H]!;
    const j = (H - k) % H;
    const c = zr[j]!;
    const d = -zi[j]!;
    // E = ((a + c) + i(b + d))/2, O = ((b - d) - i(a - c))/2, X = E + (cos - i sin)·O
    const orr = (b - d) / 2;
    const oi = -(a - c) / 2;
    outRe[k] = (a + c) / 2 + cos[k]! * orr + sin[k]! * oi;
    outIm[k] = (b + d) / 2 + cos[k]! * oi - sin[k]! * orr;
  }
}

/**
 * The inverse: the real sequence x(t) = (1/N) Σ X(k) e^{2πikt/N} of length N = 2H from the bins
 * k = 0..H of its Hermitian spectrum (sr, and si, or none for a real spectrum), returned packed in
 * zr/zi (length H) as x(2j) = zr[j], x(2j+1) = zi[j]. The even and odd samples' transforms are
 * E(k) = X(k) + X(k+H) and O(k) = (X(k) - X(k+H)) e^{2πik/N}, with X(k+H) = X*(H-k); one inverse
 * complex FFT of E + iO gives 2(x(2j) + i x(2j+1)).
 */
export function realInverse(sr: Float64Array, si: Float64Array | null, zr: Float64Array, zi: Float64Array): void {
  const H = zr.length;
  const { cos, sin } = halfTurnsOf(2 * H);
  for (let k = 0; k < H; k++) {
    const ar = sr[k]!;
    const ai = si ? si[k]! : 0;
    const br = sr[H - k]!;
    const bi = si ? -si[H - k]! : 0;
    const er = ar + br;
    const ei = ai + bi;
    const dr = ar - br;
    const di = ai - bi;
    const or = dr * cos[k]! - di * sin[k]!;
    const oi = dr * sin[k]! + di * cos[k]!;
    zr[k] = er - oi;
    zi[k] = ei + or;
  }
  fftInPlace(zr, zi, true);
  for (let j = 0; j < H; j++) {
    zr[j] = zr[j]! / 2;
    zi[j] = zi[j]! / 2;
  }
}

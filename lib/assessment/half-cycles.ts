/**
 * Half-cycles of an oscillating signal and least-squares shape fits on them: the common ground
 * of the shape tests for valve stiction (curve fit of He et al. 2007, see stiction.ts; the time
 * asymmetry of load-or-valve.ts). A half-cycle runs between two zero crossings of the lightly smoothed
 * signal less its local mean over three periods (hysteresis of a quarter of its RMS, so noise
 * adds no crossings) and is kept when its length is within 0.4-1.6 of half the period. Found
 * alike forward and backward in time (see findHalfCycles).
 */

export interface HalfCycles {
  /** Signal less its local mean (not smoothed): what the shapes are fitted to. */
  x: Float64Array;
  /** x lightly smoothed (centred, a twentieth of the period): where crossings and peaks are read. */
  s: Float64Array;
  /** [start, end) of each kept half-cycle. */
  spans: [number, number][];
}

/**
 * Mean over `w` samples centred on each one, with no delay (zero phase): for odd w a window of
 * w samples; for even w one of w + 1 samples whose two end samples count half, so that it still
 * spans exactly w sample intervals (over a whole period a periodic signal averages to its mean)
 * and is centred on the sample rather than half a sample later. Shorter at the ends, alike at
 * both, so the series run backwards gives the same means backwards.
 */
export function centredMean(x: ArrayLike<number>, w: number): Float64Array {
  const n = x.length;
  const cum = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) cum[i + 1] = cum[i]! + x[i]!;
  const h = Math.floor(w / 2);
  const even = w % 2 === 0;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const a = Math.max(0, i - h);
    const b = Math.min(n - 1, i + h);
    let sum = cum[b + 1]! - cum[a]!;
    let weight = b - a + 1;
    if (even && h > 0) {
      if (i - h >= 0) {
        sum -= x[i - h]! / 2;
        weight -= 0.5;
      }
      if (i + h < n) {
        sum -= x[i + h]! / 2;
        weight -= 0.5;
      }
    }
    out[i] = sum / weight;
  }
  return out;
}

/**
 * Periods the local mean is taken over (ours): a whole number of periods leaves a periodic cycle's
 * shape intact; three rather than one because one period of an irregular cycle (random loads,
 * a misjudged period) bends noisy half-cycles toward triangles (tried on DEV: one period made a
 * healthy loop and two outside sinusoids read stiction).
 */
const LOCAL_MEAN_PERIODS = 3;

/**
 * Where the smoothed signal s changes sign between sample `from` (beyond the hysteresis on one
 * side) and sample `to` (beyond it on the other): midway between the first and the last sign
 * change, each placed by linear interpolation (a sample exactly at zero is a change at itself).
 * Taking the last change only (the former rule) put the near-zero dither of a noisy crossing
 * always at the end of the half-cycle before it, whichever way time ran.
 */
function boundary(s: Float64Array, from: number, to: number): number {
  let first = -1;
  let last = -1;
  for (let k = from; k < to; k++) {
    const a = s[k]!;
    const b = s[k + 1]!;
    let at = -1;
    if (a === 0 && k > from) at = k;
    else if (a * b < 0) at = k + a / (a - b);
    if (at < 0) continue;
    if (first < 0) first = at;
    last = at;
  }
  return (first + last) / 2;
}

/**
 * Half-cycles found alike in both time directions (the series run backwards gives the same
 * half-cycles mirrored): centred smoothing and local mean, boundaries between excursions beyond
 * a quarter of the RMS midway between the first and last sign change, a half-cycle being the
 * samples strictly between two boundaries. So any figure that changes sign when time is reversed
 * (an area ratio, the time asymmetry of load-or-valve.ts) averages zero on a time-reversible,
 * linear Gaussian signal (Weiss, J. Appl. Probab. 12, 1975, from memory).
 */
export function findHalfCycles(signal: ArrayLike<number>, periodSamples: number): HalfCycles {
  const n = signal.length;
  const mean = centredMean(signal, Math.max(1, Math.round(LOCAL_MEAN_PERIODS * periodSamples)));
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = signal[i]! - mean[i]!;
  // Light smoothing (a twentieth of the period) against noise.
  const s = centredMean(x, Math.max(1, Math.round(periodSamples / 20)));
  let rms = 0;
  for (let i = 0; i < n; i++) rms += s[i]! * s[i]!;
  rms = Math.sqrt(rms / (n || 1));
  const hyst = 0.25 * rms;
  const bounds: number[] = [];
  let state = 0;
  let lastBeyond = -1;
  for (let i = 0; i < n; i++) {
    const v = s[i]!;
    const sign = v > hyst ? 1 : v < -hyst ? -1 : 0;
    if (sign === 0) continue;
    if (sign !== state && state !== 0) bounds.push(boundary(s, lastBeyond, i));
    state = sign;
    lastBeyond = i;
  }
  const halfP = periodSamples / 2;
  const spans: [number, number][] = [];
  for (let c = 0; c + 1 < bounds.length; c++) {
    const a = Math.floor(bounds[c]!) + 1;
    const b = Math.ceil(bounds[c + 1]!);
    const L = b - a;
    if (L < 0.4 * halfP || L > 1.6 * halfP || L < 4) continue;
    spans.push([a, b]);
  }
  return { x, s, spans };
}

/** Mean squared residual of the least-squares amplitude fit of `shape` (sampled, length of seg) to seg. */
export function fitShape(seg: ArrayLike<number>, from: number, to: number, shape: Float64Array): number {
  let sxy = 0;
  let sxx = 0;
  const L = to - from;
  for (let t = 0; t < L; t++) {
    sxy += shape[t]! * seg[from + t]!;
    sxx += shape[t]! * shape[t]!;
  }
  const A = sxx > 0 ? sxy / sxx : 0;
  let r = 0;
  for (let t = 0; t < L; t++) r += (seg[from + t]! - A * shape[t]!) ** 2;
  return r / L;
}

export function sineShape(L: number): Float64Array {
  const f = new Float64Array(L);
  for (let t = 0; t < L; t++) f[t] = Math.sin((Math.PI * (t + 0.5)) / L);
  return f;
}

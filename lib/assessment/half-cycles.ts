/**
 * Half-cycles of an oscillating signal and least-squares shape fits on them: the common ground
 * of the shape tests for valve stiction (curve fit of He et al. 2007, see stiction.ts; the time
 * asymmetry of load-or-valve.ts). A half-cycle runs between two zero crossings of the lightly smoothed,
 * signal less its local mean over three periods (hysteresis of a quarter of its RMS, so noise
 * adds no crossings) and is kept when its length is within 0.4-1.6 of half the period.
 */

export interface HalfCycles {
  /** Signal less its local mean (not smoothed): what the shapes are fitted to. */
  x: Float64Array;
  /** [start, end) of each kept half-cycle. */
  spans: [number, number][];
}

/** Moving average over `w` samples (causal, shorter at the start). */
export function movingAverage(x: ArrayLike<number>, w: number): Float64Array {
  const n = x.length;
  const s = new Float64Array(n);
  let acc = 0;
  for (let i = 0; i < n; i++) {
    acc += x[i]!;
    if (i >= w) acc -= x[i - w]!;
    s[i] = acc / Math.min(i + 1, w);
  }
  return s;
}

/**
 * The signal minus its mean over P samples centred on each one (shorter at the ends): a
 * moving mean over exactly one period of a periodic signal is its mean, so the cycle keeps its
 * shape while slow drifts (set-point moves, slow loads, an integrating PV wandering) no longer
 * decide where the zero crossings fall.
 */
function removeLocalMean(signal: ArrayLike<number>, P: number): Float64Array {
  const n = signal.length;
  const cum = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) cum[i + 1] = cum[i]! + signal[i]!;
  const lo = Math.floor(P / 2);
  const hi = P - lo;
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const a = Math.max(0, i - lo);
    const b = Math.min(n, i + hi);
    x[i] = signal[i]! - (cum[b]! - cum[a]!) / (b - a);
  }
  return x;
}

/**
 * Periods the local mean is taken over (ours): a whole number of periods leaves a periodic cycle's
 * shape intact; three rather than one because one period of an irregular cycle (random loads,
 * a misjudged period) bends noisy half-cycles toward triangles (tried on DEV: one period made a
 * healthy loop and two outside sinusoids read stiction).
 */
const LOCAL_MEAN_PERIODS = 3;

export function findHalfCycles(signal: ArrayLike<number>, periodSamples: number): HalfCycles {
  const n = signal.length;
  const x = removeLocalMean(signal, Math.max(1, Math.round(LOCAL_MEAN_PERIODS * periodSamples)));
  // Light smoothing (a twentieth of the period) against noise; centre its delay.
  const w = Math.max(1, Math.round(periodSamples / 20));
  const s = movingAverage(x, w);
  let rms = 0;
  for (let i = 0; i < n; i++) rms += s[i]! * s[i]!;
  rms = Math.sqrt(rms / (n || 1));
  const hyst = 0.25 * rms;
  const shift = Math.floor((w - 1) / 2);
  const crossings: number[] = [];
  let state = 0;
  for (let i = 0; i < n; i++) {
    const v = s[i]!;
    const next = v > hyst ? 1 : v < -hyst ? -1 : state;
    if (next !== state && state !== 0) {
      // Back-track to the sign change.
      let k = i;
      while (k > 0 && Math.sign(s[k - 1]!) === next) k--;
      crossings.push(Math.max(0, k - shift));
    }
    state = next;
  }
  const halfP = periodSamples / 2;
  const spans: [number, number][] = [];
  for (let c = 0; c + 1 < crossings.length; c++) {
    const a = crossings[c]!;
    const b = crossings[c + 1]!;
    const L = b - a;
    if (L < 0.4 * halfP || L > 1.6 * halfP || L < 4) continue;
    spans.push([a, b]);
  }
  return { x, spans };
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

/**
 * Minimum-variance (Harris) index by the FCOR algorithm.
 *
 * Harris, "Assessment of control loop performance", Can. J. Chem. Eng. 67 (1989): under any
 * linear feedback the first b impulse-response terms of the output's disturbance response are
 * fixed by the delay b, so σ²_mv = σ²_a (f0² + ... + f_{b-1}²). FCOR (Desborough & Harris, Can. J.
 * Chem. Eng. 70, 1992; Huang, Shah & Kwok, AIChE J. 43, 1997): whiten the output by a high-order
 * AR model to get the innovations a(t); then η(b) = Σ_{k<b} ρ²_ya(k) with ρ_ya the
 * cross-correlation of y(t) and a(t-k), and σ²_mv / σ²_y = η. We report the index as
 * σ²_y / σ²_mv = 1/η (>= 1; 1 is minimum-variance control).
 *
 * y is the control error over constant-SP stretches in closed loop (each stretch mean-removed).
 * The delay b is the loop's dead time in samples plus one for the zero-order hold (b = θ/T + 1).
 * Dead time is not identifiable from routine closed-loop data, so without it there is no index.
 *
 * The same sums read at a longer horizon h > b give the extended-horizon index of Thornhill,
 * Oettinger & Fedenczuk (J. Process Control 9, 1999): σ²_y / σ²_h with σ²_h = σ²_a Σ_{k<h} f_k²,
 * the variance a controller could leave that removes disturbances only after h samples
 * (extended-horizon.ts says which h the assessment reads).
 */
import { levinson } from "./signal";

export interface HarrisResult {
  index: number;
  /** η = σ²_mv / σ²_y. */
  eta: number;
  delaySamples: number;
  samplesUsed: number;
  arOrder: number;
  /** The index at the extended horizon asked for (Thornhill et al. 1999), null when not asked. */
  extended: { delaySamples: number; index: number } | null;
}

/**
 * FCOR over the stretches [start, end) of y (already the signal to judge; means removed here).
 * `arOrder` defaults to max(b + 10, 30), capped at a twentieth of the samples.
 */
export function harrisIndex(y: Float64Array, stretches: readonly [number, number][], delaySamples: number, arOrder?: number, extendedDelaySamples?: number): HarrisResult | null {
  const b = Math.max(1, Math.round(delaySamples));
  const h = extendedDelaySamples === undefined ? b : Math.max(b, Math.round(extendedDelaySamples));
  let total = 0;
  for (const [s, e] of stretches) total += e - s;
  const p = Math.min(arOrder ?? Math.max(b + 10, 30), Math.floor(total / 20));
  if (p < 2 || total < 10 * (p + b)) return null;
  // Mean-removed copy per stretch.
  const x = new Float64Array(y.length);
  for (const [s, e] of stretches) {
    let m = 0;
    for (let i = s; i < e; i++) m += y[i]!;
    m /= e - s;
    for (let i = s; i < e; i++) x[i] = y[i]! - m;
  }
  // Pooled autocovariance within stretches (no products across a stretch boundary).
  const c = new Float64Array(p + 1);
  for (const [s, e] of stretches) {
    for (let k = 0; k <= p; k++) {
      let acc = 0;
      for (let i = s + k; i < e; i++) acc += x[i]! * x[i - k]!;
      c[k] = c[k]! + acc;
    }
  }
  for (let k = 0; k <= p; k++) c[k] = c[k]! / total;
  if (!(c[0]! > 0)) return null;
  const { a } = levinson(c, p);
  // Innovations a(t) = A(q) y(t), from p samples into each stretch.
  const innov = new Float64Array(y.length);
  const valid = new Uint8Array(y.length);
  let sy = 0;
  let sa = 0;
  let ny = 0;
  for (const [s, e] of stretches) {
    for (let i = s; i < e; i++) {
      sy += x[i]! * x[i]!;
      ny++;
      if (i - s < p) continue;
      let v = x[i]!;
      for (let j = 1; j <= p; j++) v += a[j - 1]! * x[i - j]!;
      innov[i] = v;
      valid[i] = 1;
    }
  }
  let na = 0;
  for (const [s, e] of stretches) for (let i = s + p; i < e; i++) {
    sa += innov[i]! * innov[i]!;
    na++;
  }
  if (na < 10 || !(sa > 0)) return null;
  const varY = sy / ny;
  const varA = sa / na;
  let eta = 0;
  let etaH = 0;
  for (let k = 0; k < h; k++) {
    let acc = 0;
    let cnt = 0;
    for (const [s, e] of stretches) for (let i = s + p + k; i < e; i++) {
      if (!valid[i - k]) continue;
      acc += x[i]! * innov[i - k]!;
      cnt++;
    }
    if (cnt === 0) continue;
    const g = acc / cnt;
    if (k < b) eta += (g * g) / (varY * varA);
    etaH += (g * g) / (varY * varA);
  }
  eta = Math.min(1, eta);
  if (!(eta > 0)) return null;
  const extended = extendedDelaySamples === undefined ? null : { delaySamples: h, index: 1 / Math.min(1, Math.max(eta, etaH)) };
  return { index: 1 / eta, eta, delaySamples: b, samplesUsed: total, arOrder: p, extended };
}

/**
 * Sums of lagged products for normal equations built from sums (the stiction model fit,
 * stiction-fit.ts): no regressor matrix is formed, each entry Σ x[t-i]·y[t-j] is read as a
 * difference of two running sums.
 */

/**
 * Sums of lagged products Σ_{t=start}^{n-1} x[t-i]·y[t-j] for lag differences δ = j - i in
 * [dMin, dMax] and lags 0 <= i <= start, from one running sum of x[s]·y[s-δ] per δ: the sum is
 * that running sum over s in [start - i, n - i). Only the running sums at s <= start and at
 * s >= n - start are read, so only those are kept (2·(start + 1) per δ); they are the same sums,
 * added in the same order, as a full running sum would hold. One buffer, refilled for every valve
 * of the grid.
 */
export class LagSums {
  private readonly cum: Float64Array;
  private readonly n: number;
  /** Kept running sums per δ: positions 0..start, then n - start..n. */
  private readonly stride: number;
  /** Running sum per δ while filling. */
  private readonly acc: Float64Array;
  constructor(
    n: number,
    private readonly dMin: number,
    private readonly dMax: number,
    private readonly start: number,
  ) {
    if (dMin < -start || dMax > start) throw new RangeError("lag differences beyond the first fitted sample");
    this.n = n;
    this.stride = 2 * (start + 1);
    this.cum = new Float64Array((dMax - dMin + 1) * this.stride);
    this.acc = new Float64Array(dMax - dMin + 1);
  }

  fill(x: Float64Array, y: Float64Array): this {
    const { n, start, stride, dMin, dMax } = this;
    const c = this.cum;
    const acc = this.acc;
    const tail = n - start;
    // The running sum after u is the one at position u + 1: kept in the head while u + 1 <= start,
    // in the tail from u + 1 >= n - start (positions read from the head are not kept twice).
    // Products exist for u in [max(0, δ), min(n, n + δ)) (y's index u - δ within 0..n-1);
    // outside, the sum holds. Between head and tail (u in [start, n - start - 1)) all of them exist.
    const headEnd = Math.min(start, n);
    const midEnd = Math.max(headEnd, tail - 1);
    for (let d = dMin; d <= dMax; d++) {
      const o = (d - dMin) * stride;
      let s = 0;
      c[o] = 0;
      for (let u = 0; u < headEnd; u++) {
        if (u >= d && u < n + d) s += x[u]! * y[u - d]!;
        c[o + u + 1] = s;
      }
      acc[d - dMin] = s;
    }
    // The middle, four lag differences per pass over x (each sum still adds its products in
    // order of u, so the sums are the same to the last bit).
    let d = dMin;
    for (; d + 3 <= dMax; d += 4) {
      const q = d - dMin;
      let s0 = acc[q]!;
      let s1 = acc[q + 1]!;
      let s2 = acc[q + 2]!;
      let s3 = acc[q + 3]!;
      for (let u = headEnd; u < midEnd; u++) {
        const xu = x[u]!;
        const k = u - d;
        s0 += xu * y[k]!;
        s1 += xu * y[k - 1]!;
        s2 += xu * y[k - 2]!;
        s3 += xu * y[k - 3]!;
      }
      acc[q] = s0;
      acc[q + 1] = s1;
      acc[q + 2] = s2;
      acc[q + 3] = s3;
    }
    for (; d <= dMax; d++) {
      let s = acc[d - dMin]!;
      for (let u = headEnd; u < midEnd; u++) s += x[u]! * y[u - d]!;
      acc[d - dMin] = s;
    }
    for (let d = dMin; d <= dMax; d++) {
      const o = (d - dMin) * stride + start + 1 - tail;
      let s = acc[d - dMin]!;
      for (let u = midEnd; u < n; u++) {
        if (u >= d && u < n + d) s += x[u]! * y[u - d]!;
        c[o + u + 1] = s;
      }
    }
    return this;
  }

  /** Running sum at position p (p <= start or p >= n - start). */
  private at(o: number, p: number): number {
    return p <= this.start ? this.cum[o + p]! : this.cum[o + this.start + 1 + p - (this.n - this.start)]!;
  }

  get(i: number, j: number): number {
    const o = (j - i - this.dMin) * this.stride;
    return this.at(o, this.n - i) - this.at(o, this.start - i);
  }
}

/** Running sums of x: Σ_{t=start}^{n-1} x[t-i] for lag i. */
export function lagTotal(cum: Float64Array, start: number, i: number): number {
  const n = cum.length - 1;
  return cum[n - i]! - cum[start - i]!;
}

export function cumSum(x: Float64Array): Float64Array {
  const c = new Float64Array(x.length + 1);
  let s = 0;
  for (let i = 0; i < x.length; i++) c[i + 1] = s += x[i]!;
  return c;
}

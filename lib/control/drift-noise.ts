/**
 * An estimated noise model for the linear parameter drift fit (lib/control/parameter-drift.ts), as
 * refined instrumental variables use one: an AR(order) model A_n(q) e(k) = w(k) (w white) of the
 * drift model's equation error e, fitted by Levinson–Durbin to the autocovariances of the
 * residuals of the current drift estimate over the last `samples` samples, and the data y, the
 * regressor Phi and the instruments Z passed through the inverse noise filter A_n(q) before they
 * enter the drift sums. With the whitened data the IV fit is approximately generalised least
 * squares (Young's simplified refined IV; Söderström & Stoica, *System Identification*, 1989,
 * ch. 8, the optimal prefilter of the IV estimator is the inverse of the noise filter; Ljung,
 * *System Identification*, 2nd ed., 1999, sec. 7.6 and 15.2; all from memory). Filtering does
 * not change the parameters: Phi(k)' x = y(k) - e(k) holds for every k, so
 * A_n(q) y = (A_n(q) Phi)' x + A_n(q) e for any fixed A_n; instruments filtered with any A_n stay
 * uncorrelated with the filtered noise, so blocks filtered with an older noise model may be summed
 * with newer ones (consistent; efficiency that of the models used). The first model waits for
 * `settle` residual samples (a settled drift estimate: models fitted at estimates from one or two
 * blocks made the whitened fit's rates noisier than the raw fit's while its covariance shrank, so
 * the tracker's Wald test of the pole drift rejected in 6 of 80 runs of a gain drift against 0 of
 * 80 raw; docs/domain.md §7), and the samples it keeps (raw phi, z, y) let the drift fit sum every
 * sample since the start again through that first model instead of dropping them.
 * Levinson–Durbin: Box & Jenkins, *Time Series Analysis*, 1976, appendix A3.2 (from memory).
 */
import { ControlArgumentError } from "./errors";

/** AR coefficients a_1..a_p (e(k) + a_1 e(k-1) + ... = w(k)) from autocovariances r_0..r_p; null when r_0 <= 0. */
export function levinsonDurbin(r: ArrayLike<number>, p: number): Float64Array | null {
  const r0 = r[0]!;
  if (!(r0 > 0)) return null;
  const a = new Float64Array(p);
  const prev = new Float64Array(p);
  let err = r0;
  for (let m = 0; m < p; m++) {
    let acc = r[m + 1]!;
    for (let i = 0; i < m; i++) acc += a[i]! * r[m - i]!;
    const k = -acc / err;
    if (!(Math.abs(k) < 1)) return m === 0 ? null : a;
    prev.set(a);
    for (let i = 0; i < m; i++) a[i] = prev[i]! + k * prev[m - 1 - i]!;
    a[m] = k;
    err *= 1 - k * k;
  }
  return a;
}

/** How the noise model is fitted (module doc). */
export interface DriftNoiseFit {
  /** Fewest kept residual samples before the first model (default 10 x order). */
  settle?: number;
}

export class DriftNoiseModel {
  /** Current AR coefficients a_1..a_order (zeros: no filter yet). */
  readonly a: Float64Array;
  /** Raw past Phi, Z (p each, with the time factor of the origin then) and y, newest first, order + 1 deep. */
  private readonly rawPhi: Float64Array;
  private readonly rawZ: Float64Array;
  private readonly rawY: Float64Array;
  private rawCount = 0;
  /** Ring of the last `samples` raw samples for the residuals: time, phi (d), y, and whether it follows its predecessor. */
  private readonly ringT: Float64Array;
  private readonly ringPhi: Float64Array;
  private readonly ringY: Float64Array;
  private readonly ringJoined: Uint8Array;
  /** Raw instruments (d, no time factor) and whether the sample was informative, per kept sample. */
  private readonly ringZ: Float64Array;
  private readonly ringInformative: Uint8Array;
  /** Samples since the last reset (the ring holds all of them while this is <= `samples`). */
  private seen = 0;
  private ringNext = 0;
  private ringCount = 0;
  private joined = false;
  /** Noise models fitted so far. */
  updates = 0;

  constructor(private readonly d: number, readonly order: number, private readonly samples: number, private readonly how: DriftNoiseFit = {}) {
    if (!Number.isInteger(order) || order < 1) throw new ControlArgumentError(`noise order must be an integer >= 1, got ${order}`);
    if (!Number.isInteger(samples) || samples < 10 * order) throw new ControlArgumentError(`noise samples must be an integer >= 10 x order, got ${samples}`);
    const p = 2 * d;
    this.a = new Float64Array(order);
    this.rawPhi = new Float64Array((order + 1) * p);
    this.rawZ = new Float64Array((order + 1) * p);
    this.rawY = new Float64Array(order + 1);
    this.ringT = new Float64Array(samples);
    this.ringPhi = new Float64Array(samples * d);
    this.ringY = new Float64Array(samples);
    this.ringJoined = new Uint8Array(samples);
    this.ringZ = new Float64Array(samples * d);
    this.ringInformative = new Uint8Array(samples);
  }

  reset(): void {
    this.a.fill(0);
    this.updates = 0;
    this.clearSamples();
  }

  /** Forget the kept samples and the filter's past, keep the model. */
  clearSamples(): void {
    this.rawCount = 0;
    this.ringCount = 0;
    this.ringNext = 0;
    this.joined = false;
    this.seen = 0;
  }

  /** Whether the kept samples are every sample since the last reset. */
  get keepsAll(): boolean {
    return this.seen <= this.samples;
  }

  /** The kept raw samples, oldest first: time, phi and z (d each), y, informative, joined to the one before. */
  kept(): { t: number; phi: Float64Array; z: Float64Array; y: number; informative: boolean; joined: boolean }[] {
    const { d, samples } = this;
    const n = this.ringCount;
    const start = (this.ringNext - n + samples) % samples;
    const out = [];
    for (let k = 0; k < n; k++) {
      const i = (start + k) % samples;
      out.push({ t: this.ringT[i]!, phi: this.ringPhi.slice(i * d, i * d + d), z: this.ringZ.slice(i * d, i * d + d), y: this.ringY[i]!, informative: this.ringInformative[i] === 1, joined: k > 0 && this.ringJoined[i] === 1 });
    }
    return out;
  }

  /** A gap: the next sample has no past to filter with. */
  gap(): void {
    this.rawCount = 0;
    this.joined = false;
  }

  /**
   * Takes the raw sample (Phi, Z with the time factor, p each; phi without it, d) and writes the
   * filtered Phi, Z into outPhi, outZ; returns the filtered y, or NaN while the filter has fewer
   * than `order` past samples since a gap (the sample then enters no sums).
   */
  filter(t: number, phi: ArrayLike<number>, Phi: Float64Array, Z: Float64Array, y: number, outPhi: Float64Array, outZ: Float64Array, informative = true): number {
    const { order, d } = this;
    const p = 2 * d;
    const i = this.ringNext;
    this.ringT[i] = t;
    for (let j = 0; j < d; j++) {
      this.ringPhi[i * d + j] = phi[j]!;
      this.ringZ[i * d + j] = Z[j]!;
    }
    this.ringInformative[i] = informative ? 1 : 0;
    this.seen++;
    this.ringY[i] = y;
    this.ringJoined[i] = this.joined ? 1 : 0;
    this.joined = true;
    this.ringNext = (i + 1) % this.samples;
    this.ringCount = Math.min(this.samples, this.ringCount + 1);
    const rP = this.rawPhi, rZ = this.rawZ, rY = this.rawY;
    rP.copyWithin(p, 0, order * p);
    rZ.copyWithin(p, 0, order * p);
    rY.copyWithin(1, 0, order);
    rP.set(Phi.subarray(0, p));
    rZ.set(Z.subarray(0, p));
    rY[0] = y;
    this.rawCount = Math.min(order + 1, this.rawCount + 1);
    if (this.rawCount <= order) return NaN;
    outPhi.set(Phi.subarray(0, p));
    outZ.set(Z.subarray(0, p));
    let yf = y;
    for (let l = 1; l <= order; l++) {
      const c = this.a[l - 1]!;
      if (c === 0) continue;
      yf += c * rY[l]!;
      for (let j = 0; j < p; j++) {
        outPhi[j]! += c * rP[l * p + j]!;
        outZ[j]! += c * rZ[l * p + j]!;
      }
    }
    return yf;
  }

  /** The kept raw Phi and Z to a new time origin (`move` applied to each p-vector at an offset). */
  rebase(move: (v: Float64Array, off: number) => void): void {
    const p = 2 * this.d;
    for (let l = 0; l <= this.order; l++) {
      move(this.rawPhi, l * p);
      move(this.rawZ, l * p);
    }
  }

  /**
   * Refits the noise model to the residuals y - phi'(x_0 + tau x_1) of the kept samples at the
   * drift estimate x (2 d, time tau = (t - origin) / window); keeps the old model when there are
   * too few samples or the autocovariances are not positive definite. Returns whether it changed.
   */
  update(x: Float64Array, origin: number, window: number): boolean {
    const { d, order, samples } = this;
    const n = this.ringCount;
    if (n < Math.max(10 * order, this.how.settle ?? 0)) return false;
    const e = new Float64Array(n);
    const joined = new Uint8Array(n);
    const start = (this.ringNext - n + samples) % samples;
    let mean = 0;
    for (let k = 0; k < n; k++) {
      const i = (start + k) % samples;
      const tau = (this.ringT[i]! - origin) / window;
      let v = this.ringY[i]!;
      for (let j = 0; j < d; j++) v -= this.ringPhi[i * d + j]! * (x[j]! + tau * x[d + j]!);
      e[k] = v;
      joined[k] = k > 0 ? this.ringJoined[i]! : 0;
      mean += v;
    }
    mean /= n;
    const r = new Float64Array(order + 1);
    for (let l = 0; l <= order; l++) {
      let s = 0, m = 0;
      for (let k = l; k < n; k++) {
        let ok = true;
        for (let j = k - l + 1; j <= k && ok; j++) ok = joined[j] === 1;
        if (!ok) continue;
        s += (e[k]! - mean) * (e[k - l]! - mean);
        m++;
      }
      if (m < 5 * order) return false;
      r[l] = s / n;
    }
    const a = levinsonDurbin(r, order);
    if (!a || !a.every(Number.isFinite)) return false;
    this.a.set(a);
    this.updates++;
    return true;
  }
}

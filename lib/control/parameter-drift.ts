/**
 * Parameters that drift linearly in time, estimated from the samples themselves over a window
 * (`LinearDriftIv`): the ARX model y(k) = phi(k)' theta(t_k) + v(k) with
 *   theta(t) = theta0 + theta1 (t - t0),
 * i.e. the regressor [phi(k), (t_k - t0) phi(k)] and 2 d parameters, fitted by instrumental
 * variables with the instruments [z(k), (t_k - t0) z(k)] over the samples of the last `window`
 * seconds. This is the time-varying-parameter regression of Ljung, *System Identification*, 2nd
 * ed., 1999, sec. 16.1 (parameters as known functions of time times constant coefficients; the
 * same model as a Kalman filter with an integrated random walk of zero intensity over the window;
 * from memory); with the instruments of the constant-parameter IV estimator (lib/control/riv.ts,
 * Söderström & Stoica, *System Identification*, 1989, sec. 8.1) it stays consistent in closed
 * loop. Under a linear drift it uses every sample once and has no lag, unlike a trend fitted
 * through the estimates of a forgetting estimator (docs/domain.md §7).
 *
 * Covariance: the IV sandwich A^-1 S A^-T with A = sum Z Phi' and S the long-run covariance of
 * the scores Z(k) e(k) under an equation error e that is stationary and independent of the
 * instruments, S = sum_|l|<=L w_l gamma(l) sum_k Z(k) Z(k-l)', Bartlett weights w_l = 1 - |l| / (L + 1)
 * over `lags` informative samples (the equation error is coloured: A(q) n, and the tracker's
 * leaky-differencing prefilter; Newey & West, *Econometrica* 55(3), 1987, for the weights). The
 * residual autocovariances gamma(l) are those of the window's own residuals at the solved
 * estimate, exact: sum e(k) e(k-l) expands into lagged sums of y, Phi y and Phi Phi' kept per block.
 * Sliding window in blocks: the sums are kept per block of `block` seconds and summed over the
 * blocks inside the window at `estimate`, so a sample costs O(d^2 lags) and nothing is ever
 * subtracted. Option `noise`: the data enter the sums whitened by an estimated AR noise model
 * refitted at every new block (./drift-noise.ts, refined IV); the first one re-filters the samples kept since the start. Time is counted from an origin in units of the window; when it grows past 4
 * windows, every block's sums move to a new origin exactly (Z' = T Z, T = [[I, 0], [-c I, I]]).
 */
import { ControlArgumentError } from "./errors";
import { DriftNoiseModel, type DriftNoiseFit } from "./drift-noise";
import { sandwich, solveInto } from "./linalg";

export interface LinearDriftOptions {
  /** Parameters of the constant model (na + nb). */
  d: number;
  /** Length of the window, seconds. */
  window: number;
  /** Length of a block of sums, seconds (the window's granularity); default window / 20. */
  block?: number;
  /** Newey–West lag of the score covariance, in informative samples; default 0 (white scores). */
  lags?: number;
  /**
   * Estimated noise model (./drift-noise.ts): AR `order` of the equation error, refitted at every
   * new block to the residuals of the last `samples` samples; the data enter the sums whitened by
   * it. Absent: none (the sums of the raw data).
   */
  noise?: { order: number; samples: number } & DriftNoiseFit;
}

/** The drift estimate at the last sample: theta there, its rate per second, and their joint covariance. */
export interface DriftEstimate {
  /** Time of the last sample in the window, seconds; the first one. */
  t: number;
  tFirst: number;
  /** Informative samples in the window. */
  samples: number;
  /** theta(t), d values. */
  theta: Float64Array;
  /** d theta / dt, per second, d values. */
  rate: Float64Array;
  /** Covariance of [theta(t), rate], 2 d x 2 d row-major. */
  covariance: Float64Array;
}

/** A block's sums in one array (offsets in `Layout`): n, A = sum Z Phi', f = sum Z y, and per lag
 * l = 0..L the pairs, sum y y_l, sum Phi y_l, sum y Phi_l, sum Phi Phi_l', sum Z Z_l'. */
interface Block {
  start: number;
  tFirst: number;
  tLast: number;
  sums: Float64Array;
}

interface Layout {
  A: number;
  f: number;
  pairs: number;
  yy: number;
  Py: number;
  yP: number;
  PP: number;
  ZZ: number;
  size: number;
}

function layout(p: number, L1: number): Layout {
  const A = 1;
  const f = A + p * p;
  const pairs = f + p;
  const yy = pairs + L1;
  const Py = yy + L1;
  const yP = Py + L1 * p;
  const PP = yP + L1 * p;
  const ZZ = PP + L1 * p * p;
  return { A, f, pairs, yy, Py, yP, PP, ZZ, size: ZZ + L1 * p * p };
}

export class LinearDriftIv {
  readonly d: number;
  readonly window: number;
  private readonly blockS: number;
  private readonly lags: number;
  private readonly p: number;
  private blocks: Block[] = [];
  private readonly at: Layout;
  /** Sum of every block but the last (recomputed when the set of blocks changes). */
  private closed: Float64Array;
  private closedDirty = false;
  private origin = NaN;
  /** The last `lags` + 1 informative samples' Phi, Z (p each) and y, newest first. */
  private readonly histPhi: Float64Array;
  private readonly histZ: Float64Array;
  private readonly histY: Float64Array;
  private histCount = 0;
  private readonly work: Float64Array;
  private readonly noise: DriftNoiseModel | null;
  /** This sample's raw Phi, Z (with the time factor) and, whitened, their filtered values. */
  private readonly rawPhi: Float64Array;
  private readonly rawZ: Float64Array;
  private readonly fPhi: Float64Array;
  private readonly fZ: Float64Array;
  /** The block whose end last refitted the noise model; whether kept samples are being replayed. */
  private refitFor: Block | null = null;
  private replaying = false;

  constructor(o: LinearDriftOptions) {
    if (!Number.isInteger(o.d) || o.d < 1) throw new ControlArgumentError(`d must be an integer >= 1, got ${o.d}`);
    if (!(o.window > 0) || !Number.isFinite(o.window)) throw new ControlArgumentError(`window must be > 0 seconds, got ${o.window}`);
    const lags = o.lags ?? 0;
    if (!Number.isInteger(lags) || lags < 0) throw new ControlArgumentError(`lags must be an integer >= 0, got ${lags}`);
    this.d = o.d;
    this.window = o.window;
    this.blockS = o.block ?? o.window / 20;
    if (!(this.blockS > 0)) throw new ControlArgumentError(`block must be > 0 seconds, got ${o.block}`);
    this.lags = lags;
    const p = (this.p = 2 * o.d);
    this.histPhi = new Float64Array((lags + 1) * p);
    this.histZ = new Float64Array((lags + 1) * p);
    this.histY = new Float64Array(lags + 1);
    this.work = new Float64Array(p * (p + 1));
    this.at = layout(p, lags + 1);
    this.closed = new Float64Array(this.at.size);
    this.noise = o.noise ? new DriftNoiseModel(o.d, o.noise.order, o.noise.samples, o.noise) : null;
    this.rawPhi = new Float64Array(p);
    this.rawZ = new Float64Array(p);
    this.fPhi = new Float64Array(p);
    this.fZ = new Float64Array(p);
  }

  /** The noise model's AR coefficients a_1..a_order (empty without one) and how often it was refitted. */
  get noiseModel(): { a: Float64Array; updates: number } {
    return { a: this.noise ? Float64Array.from(this.noise.a) : new Float64Array(0), updates: this.noise?.updates ?? 0 };
  }

  /** Forget everything. */
  reset(): void {
    this.blocks = [];
    this.closed.fill(0);
    this.origin = NaN;
    this.histCount = 0;
    this.refitFor = null;
    this.noise?.reset();
  }

  /** A gap in the informative samples (skipped data): the next sample has no lagged partner. */
  gap(): void {
    this.histCount = 0;
    this.noise?.gap();
  }

  /**
   * One sample at time t (seconds, increasing): regressor phi, instruments z (d each), output y.
   * Only `informative` ones enter the sums; with a noise model the others still pass through its
   * filter and residuals (whitening needs the consecutive series), without one they are ignored.
   */
  add(t: number, phi: ArrayLike<number>, z: ArrayLike<number>, y: number, informative = true): void {
    if (!informative && !this.noise) return;
    const { d, p } = this;
    const open = this.blocks[this.blocks.length - 1];
    if (this.noise && !this.replaying && open && t >= open.start + this.blockS && this.refitFor !== open) {
      this.refitFor = open;
      this.refitNoise();
    }
    if (!Number.isFinite(this.origin)) this.origin = t;
    if ((t - this.origin) / this.window > 4) this.rebase(t);
    const tau = (t - this.origin) / this.window;
    const L1 = this.lags + 1;
    const rP = this.rawPhi;
    const rZ = this.rawZ;
    for (let i = 0; i < d; i++) {
      rZ[i] = z[i]!;
      rZ[d + i] = tau * z[i]!;
      rP[i] = phi[i]!;
      rP[d + i] = tau * phi[i]!;
    }
    if (this.noise) {
      y = this.noise.filter(t, phi, rP, rZ, y, this.fPhi, this.fZ, informative);
      if (Number.isNaN(y) || !informative) return;
    }
    let b = this.blocks[this.blocks.length - 1];
    if (!b || t >= b.start + this.blockS) {
      b = { start: t, tFirst: t, tLast: t, sums: new Float64Array(this.at.size) };
      this.blocks.push(b);
      this.closedDirty = true;
    }
    const from = t - this.window;
    while (this.blocks.length > 1 && this.blocks[0]!.tLast < from) {
      this.blocks.shift();
      this.closedDirty = true;
    }
    const hP = this.histPhi;
    const hZ = this.histZ;
    const hY = this.histY;
    hP.copyWithin(p, 0, this.lags * p);
    hZ.copyWithin(p, 0, this.lags * p);
    hY.copyWithin(1, 0, this.lags);
    hP.set(this.noise ? this.fPhi : rP);
    hZ.set(this.noise ? this.fZ : rZ);
    hY[0] = y;
    this.histCount = Math.min(L1, this.histCount + 1);
    b.tLast = t;
    const S = b.sums;
    const at = this.at;
    S[0]! += 1;
    for (let i = 0; i < p; i++) {
      const zi = hZ[i]!;
      for (let j = 0; j < p; j++) S[at.A + i * p + j]! += zi * hP[j]!;
      S[at.f + i]! += zi * y;
    }
    // lagged products of this sample with the one l informative samples before (l = 0: itself)
    const { pairs, yy, Py, yP, PP, ZZ } = at;
    const pp = p * p;
    for (let l = 0; l < this.histCount; l++) {
      const o = l * p;
      const yl = hY[l]!;
      S[pairs + l]! += 1;
      S[yy + l]! += y * yl;
      for (let i = 0; i < p; i++) {
        const pi = hP[i]!;
        const zi = hZ[i]!;
        S[Py + o + i]! += pi * yl;
        S[yP + o + i]! += y * hP[o + i]!;
        const rowP = PP + l * pp + i * p;
        const rowZ = ZZ + l * pp + i * p;
        for (let j = 0; j < p; j++) {
          S[rowP + j]! += pi * hP[o + j]!;
          S[rowZ + j]! += zi * hZ[o + j]!;
        }
      }
    }
  }

  /** Refits the noise model at the window's current estimate (./drift-noise.ts). */
  private refitNoise(): void {
    const W = this.windowSums();
    const p = this.p;
    if (!(W[0]! >= 10 * p)) return;
    const x = new Float64Array(p);
    if (!(solveInto(W.subarray(this.at.A, this.at.A + p * p), W.subarray(this.at.f, this.at.f + p), p, this.work, x) > 0)) return;
    const first = this.noise!.updates === 0;
    // the raw (unwhitened) blocks' equation error is far larger than the whitened ones': summed
    // with them it would dominate the estimate and its covariance (a test: no gain at all), so the
    // first noise model restarts the sums; later models differ little and are summed
    const noise = this.noise!;
    if (!noise.update(x, this.origin, this.window) || !first) return;
    this.blocks = [];
    this.closed.fill(0);
    this.closedDirty = false;
    this.histCount = 0;
    // with every sample since the start still kept, they are summed again through the new filter
    // (nothing lost to the restart); otherwise the sums start afresh from here
    if (!noise.keepsAll) return;
    const kept = noise.kept();
    noise.clearSamples();
    this.replaying = true;
    try {
      for (const s of kept) {
        if (!s.joined) this.gap();
        this.add(s.t, s.phi, s.z, s.y, s.informative);
      }
    } finally {
      this.replaying = false;
      this.refitFor = this.blocks[this.blocks.length - 1] ?? null;
    }
  }

  /** The window's sums: the closed blocks' (kept) and the last block's. */
  private windowSums(): Float64Array {
    const n = this.blocks.length;
    if (this.closedDirty) {
      this.closed.fill(0);
      for (let k = 0; k < n - 1; k++) {
        const s = this.blocks[k]!.sums;
        for (let i = 0; i < s.length; i++) this.closed[i]! += s[i]!;
      }
      this.closedDirty = false;
    }
    const out = Float64Array.from(this.closed);
    const s = this.blocks[n - 1]!.sums;
    for (let i = 0; i < s.length; i++) out[i]! += s[i]!;
    return out;
  }

  /**
   * The estimate from the blocks inside the window ending at the last sample, or null when there
   * are fewer than `minSamples` (default 10 p) samples, the sums are singular or the score
   * covariance is not positive.
   */
  estimate(minSamples = 10 * this.p): DriftEstimate | null {
    const { p, d } = this;
    const L1 = this.lags + 1;
    const last = this.blocks[this.blocks.length - 1];
    if (!last) return null;
    const W = this.windowSums();
    const at = this.at;
    const n = W[0]!;
    const tFirst = this.blocks[0]!.tFirst;
    if (n < Math.max(minSamples, p + 1)) return null;
    const A = W.subarray(at.A, at.A + p * p);
    const x = new Float64Array(p);
    if (!(solveInto(A, W.subarray(at.f, at.f + p), p, this.work, x) > 0)) return null;
    // S = sum_l w_l gamma(l) (ZZ_l + ZZ_l'), gamma(l) of the residuals at x (module doc)
    const S = new Float64Array(p * p);
    for (let l = 0; l < L1; l++) {
      const pairs = W[at.pairs + l]!;
      if (!(pairs > 0)) continue;
      let ee = W[at.yy + l]!;
      for (let i = 0; i < p; i++) {
        ee -= x[i]! * (W[at.Py + l * p + i]! + W[at.yP + l * p + i]!);
        for (let j = 0; j < p; j++) ee += x[i]! * W[at.PP + l * p * p + i * p + j]! * x[j]!;
      }
      const c = ((1 - l / L1) * ee) / pairs;
      const zz = at.ZZ + l * p * p;
      for (let i = 0; i < p; i++) {
        for (let j = 0; j < p; j++) S[i * p + j]! += c * (l === 0 ? W[zz + i * p + j]! : W[zz + i * p + j]! + W[zz + j * p + i]!);
      }
    }
    const Ainv = new Float64Array(p * p);
    const col = new Float64Array(p);
    const e = new Float64Array(p);
    for (let j = 0; j < p; j++) {
      e.fill(0);
      e[j] = 1;
      if (!(solveInto(A, e, p, this.work, col) > 0)) return null;
      for (let i = 0; i < p; i++) Ainv[i * p + j] = col[i]!;
    }
    const P = sandwich(Ainv, S, p, n / (n - p));
    for (let i = 0; i < p; i++) if (!(P[i * p + i]! > 0)) return null;
    // to the last sample: [theta(t), rate] = G [theta0, theta1], G = [[I, tau I], [0, I / window]]
    const tau = (last.tLast - this.origin) / this.window;
    const G = new Float64Array(p * p);
    for (let i = 0; i < d; i++) {
      G[i * p + i] = 1;
      G[i * p + d + i] = tau;
      G[(d + i) * p + d + i] = 1 / this.window;
    }
    const covariance = sandwich(G, P, p, 1);
    const theta = new Float64Array(d);
    const rate = new Float64Array(d);
    for (let i = 0; i < d; i++) {
      theta[i] = x[i]! + tau * x[d + i]!;
      rate[i] = x[d + i]! / this.window;
    }
    return { t: last.tLast, tFirst, samples: n, theta, rate, covariance };
  }

  /** Move the origin to t: every block's sums and the kept samples (module doc). */
  private rebase(t: number): void {
    const { d, p } = this;
    const c = (t - this.origin) / this.window;
    // T M T' for T = [[I, 0], [-c I, I]]: rows d.. -= c rows 0..d-1, then the same for columns
    const both = (M: Float64Array, off: number) => {
      for (let i = 0; i < d; i++) for (let j = 0; j < p; j++) M[off + (d + i) * p + j]! -= c * M[off + i * p + j]!;
      for (let j = 0; j < d; j++) for (let i = 0; i < p; i++) M[off + i * p + d + j]! -= c * M[off + i * p + j]!;
    };
    const vec = (v: Float64Array, off: number) => {
      for (let i = 0; i < d; i++) v[off + d + i]! -= c * v[off + i]!;
    };
    const at = this.at;
    for (const b of this.blocks) {
      const S = b.sums;
      both(S, at.A);
      vec(S, at.f);
      for (let l = 0; l <= this.lags; l++) {
        both(S, at.PP + l * p * p);
        both(S, at.ZZ + l * p * p);
        vec(S, at.Py + l * p);
        vec(S, at.yP + l * p);
      }
    }
    this.closedDirty = true;
    for (let l = 0; l <= this.lags; l++) {
      vec(this.histPhi, l * p);
      vec(this.histZ, l * p);
    }
    this.noise?.rebase(vec);
    this.origin = t;
  }
}

/**
 * Robustness of a recursive estimator against isolated outliers, and a watch on its prediction
 * error for a fit collapse. Pure numerics, no I/O; used by the loop tracker on the prefiltered
 * signals before they reach the estimators.
 *
 * Residual test with a bounded influence function. The a-priori prediction error of the current
 * ARX model, e(k) = y(k) - phi(k)' theta, is scaled by a robust running scale s (the median of
 * |e| over a sliding window times 1.4826, which estimates the standard deviation of Gaussian
 * errors: the median absolute deviation, Hampel 1974, JASA 69, from memory) and passed through
 * Huber's psi function psi_c(x) = max(-c, min(c, x)) (Huber, "Robust estimation of a location
 * parameter", Ann. Math. Statist. 35, 1964). An error beyond k s (k = 6: rare for the residuals of
 * a fitting model) marks an outlier, and the observation is replaced by the prediction plus
 * s psi_c(e / s) (c = 1.5): it enters with at most 1.5 s of error, whatever its size. This is
 * the cleaning step of robust recursive filters and estimators (Masreliez & Martin, "Robust
 * Bayesian estimation for the linear model and robustifying the Kalman filter", IEEE TAC 22,
 * 1977; the same bounded-influence idea, from memory). Only isolated outliers may be bounded (an
 * "additive outlier", as opposed to a level shift or an innovation the process carries on, Fox,
 * "Outliers in time series", JRSS B 34, 1972, from memory): the caller tells them apart by the
 * next sample (`ArxPredictor.predictNext`), so a real change of the process passes unchanged.
 *
 * Fit collapse: the same robust scale over the recent window against a slow baseline of itself
 * (an exponentially weighted mean taken while the fit is normal). A prediction error scale
 * `collapseFactor` times its baseline for `collapseRun` samples in a row is a collapse; it ends
 * when the scale is back under `recoverFactor` times the baseline. The absolute fit figure
 * (1 - residual/signal) is no measure of this: between set-point moves it reads below 0 on healthy
 * noisy loops (measured on the demo loops), so the watch compares the loop with itself.
 */
import { ControlArgumentError } from "./errors";
import { shiftIn } from "./lag";

/** 1 / Phi^-1(3/4): the median of |e| for standard normal e is 0.6745 (common statistical constant). */
export const MAD_TO_SIGMA = 1.4826;

/** Huber's psi: x clipped to [-k, k]. */
export function huberPsi(x: number, k: number): number {
  return x > k ? k : x < -k ? -k : x;
}

export interface ResidualScreenOptions {
  /** Detection threshold in robust standard deviations; default 6 (4 bounded ordinary heavy-tailed residuals on the demo loops and cost them accuracy: measured). */
  k?: number;
  /** Threshold of the psi function that bounds a detected outlier; default 1.5 (the usual range of Huber's constant, 1.345-1.5). */
  c?: number;
  /** Samples in the scale window (odd); default 49. */
  window?: number;
  /** Samples before the screen acts; default the window length. */
  warmup?: number;
  /** Scale ratio that starts a fit collapse, and the one that ends it; defaults 6 and 3 (healthy demo loops peak near 4 for a few samples). */
  collapseFactor?: number;
  recoverFactor?: number;
  /** Samples in a row above `collapseFactor` before a collapse is declared; default 20. */
  collapseRun?: number;
  /** Weight of a new scale value in the baseline; default 1/600. */
  baselineWeight?: number;
}

export interface ResidualScreenState {
  version: 1;
  ring: number[];
  filled: number;
  next: number;
  seen: number;
  baseline: number;
  above: number;
  collapsed: boolean;
  collapseScale: number;
}

export class ResidualScreen {
  readonly k: number;
  readonly c: number;
  readonly window: number;
  readonly warmup: number;
  readonly collapseFactor: number;
  readonly recoverFactor: number;
  readonly collapseRun: number;
  readonly baselineWeight: number;
  private readonly ring: Float64Array;
  private readonly scratch: Float64Array;
  private filled = 0;
  private next = 0;
  private seen = 0;
  private baseline = 0;
  private above = 0;
  private cachedScale = NaN;
  /** True while the prediction error scale is collapsed (far above its baseline). */
  collapsed = false;
  /** The scale ratio to the baseline when the collapse was declared. */
  collapseRatio = NaN;

  constructor(o: ResidualScreenOptions = {}) {
    this.k = o.k ?? 6;
    this.c = o.c ?? 1.5;
    this.window = o.window ?? 49;
    this.warmup = o.warmup ?? this.window;
    this.collapseFactor = o.collapseFactor ?? 6;
    this.recoverFactor = o.recoverFactor ?? 3;
    this.collapseRun = o.collapseRun ?? 20;
    this.baselineWeight = o.baselineWeight ?? 1 / 600;
    if (!(this.k > 0) || !Number.isInteger(this.window) || this.window < 5 || !(this.recoverFactor > 1) || !(this.collapseFactor >= this.recoverFactor)) {
      throw new ControlArgumentError("ResidualScreen: need k > 0, an integer window >= 5 and collapseFactor >= recoverFactor > 1");
    }
    this.ring = new Float64Array(this.window);
    this.scratch = new Float64Array(this.window);
  }

  /** Robust scale of the recent errors (MAD about zero x 1.4826); NaN before any sample. */
  scale(): number {
    if (!Number.isNaN(this.cachedScale)) return this.cachedScale;
    const n = this.filled;
    if (n === 0) return NaN;
    const a = this.scratch.subarray(0, n);
    a.set(this.ring.subarray(0, n));
    a.sort();
    const med = n % 2 ? a[(n - 1) / 2]! : (a[n / 2 - 1]! + a[n / 2]!) / 2;
    this.cachedScale = MAD_TO_SIGMA * med;
    return this.cachedScale;
  }

  /** The baseline scale the collapse test compares with (0 before it starts). */
  baselineScale(): number {
    return this.baseline;
  }

  /** The screen has seen enough errors to judge one. */
  ready(): boolean {
    return this.seen > this.warmup && this.scale() > 0;
  }

  /** |e| beyond k robust standard deviations (false until `ready`). */
  isLarge(e: number): boolean {
    return this.ready() && Math.abs(e) > this.k * this.scale();
  }

  /** s psi_c(e / s): the error a detected outlier enters with (e itself before the screen is ready). */
  bound(e: number): number {
    const sc = this.scale();
    return this.ready() ? sc * huberPsi(e / sc, this.c) : e;
  }

  /**
   * Record an a-priori error as it was (an outlier too: the median does not move for one, a run
   * of large errors of a real change moves it) and update the collapse watch.
   */
  record(e: number): void {
    if (!Number.isFinite(e)) return;
    this.seen++;
    this.ring[this.next] = Math.abs(e);
    this.next = (this.next + 1) % this.window;
    if (this.filled < this.window) this.filled++;
    this.cachedScale = NaN;
    this.watch();
  }

  private watch(): void {
    if (this.seen <= this.warmup) return;
    const s = this.scale();
    if (!(s > 0)) return;
    if (this.baseline === 0) {
      this.baseline = s;
      return;
    }
    const ratio = s / this.baseline;
    if (this.collapsed) {
      if (ratio < this.recoverFactor) {
        this.collapsed = false;
        this.above = 0;
      }
      return;
    }
    // the baseline learns only from normal values: a run on its way to a collapse must not lift it
    this.above = ratio > this.collapseFactor ? this.above + 1 : 0;
    if (this.above >= this.collapseRun) {
      this.collapsed = true;
      this.collapseRatio = ratio;
    } else if (this.above === 0) this.baseline += this.baselineWeight * (s - this.baseline);
  }

  /** Forget everything (the model that judged the errors is no longer the one in use); warms up again. */
  restart(): void {
    if (this.seen === 0 && this.filled === 0) return;
    this.filled = this.next = this.seen = this.above = 0;
    this.baseline = 0;
    this.collapsed = false;
    this.collapseRatio = NaN;
    this.cachedScale = NaN;
  }

  /** Take the current scale as the new normal (the model was refitted and still errs this much: the loop's new noise level). */
  rebase(): void {
    const s = this.scale();
    if (s > 0) this.baseline = s;
    this.collapsed = false;
    this.above = 0;
  }

  toJSON(): ResidualScreenState {
    return {
      version: 1,
      ring: Array.from(this.ring),
      filled: this.filled,
      next: this.next,
      seen: this.seen,
      baseline: this.baseline,
      above: this.above,
      collapsed: this.collapsed,
      collapseScale: Number.isFinite(this.collapseRatio) ? this.collapseRatio : 0,
    };
  }

  /** Restore a state of the same window length; returns false (state untouched) otherwise. */
  restore(s: ResidualScreenState | null | undefined): boolean {
    if (!s || s.version !== 1 || !Array.isArray(s.ring) || s.ring.length !== this.window) return false;
    const nums = [...s.ring, s.filled, s.next, s.seen, s.baseline, s.above, s.collapseScale];
    if (!nums.every((v) => typeof v === "number" && Number.isFinite(v))) return false;
    if (s.filled < 0 || s.filled > this.window || s.next < 0 || s.next >= this.window) return false;
    this.ring.set(s.ring);
    this.filled = s.filled;
    this.next = s.next;
    this.seen = s.seen;
    this.baseline = s.baseline;
    this.above = s.above;
    this.collapsed = s.collapsed === true;
    this.collapseRatio = s.collapseScale > 0 ? s.collapseScale : NaN;
    this.cachedScale = NaN;
    return true;
  }
}

/**
 * One-step-ahead prediction of an ARX model from its own history of (y, u):
 * y^(k) = -a1 y(k-1) - ... - a_na y(k-na) + b0 u(k-nk) + ... + b_{nb-1} u(k-nk-nb+1).
 * Sized for the largest structure it will see; `shift` after each sample.
 */
export class ArxPredictor {
  private readonly y: Float64Array;
  private readonly u: Float64Array;

  constructor(maxNa: number, maxNbNk: number) {
    this.y = new Float64Array(Math.max(1, maxNa));
    this.u = new Float64Array(Math.max(1, maxNbNk));
  }

  /** Prediction for theta = [a1..a_na, b0..b_{nb-1}] with delay nk; NaN if the structure does not fit the history. */
  predict(theta: ArrayLike<number>, na: number, nb: number, nk: number): number {
    if (na > this.y.length || nk + nb - 1 > this.u.length || theta.length < na + nb) return NaN;
    let p = 0;
    for (let i = 0; i < na; i++) p -= theta[i]! * this.y[i]!;
    for (let j = 0; j < nb; j++) p += theta[na + j]! * this.u[nk - 1 + j]!;
    return p;
  }

  /** The prediction one sample later, after `shift(y0, u0)`, without shifting. */
  predictNext(theta: ArrayLike<number>, na: number, nb: number, nk: number, y0: number, u0: number): number {
    if (na > this.y.length || nk + nb - 1 > this.u.length || theta.length < na + nb) return NaN;
    let p = 0;
    for (let i = 0; i < na; i++) p -= theta[i]! * (i === 0 ? y0 : this.y[i - 1]!);
    for (let j = 0; j < nb; j++) {
      const lag = nk - 1 + j;
      p += theta[na + j]! * (lag === 0 ? u0 : this.u[lag - 1]!);
    }
    return p;
  }

  shift(y: number, u: number): void {
    shiftIn(this.y, y);
    shiftIn(this.u, u);
  }

  toJSON(): { y: number[]; u: number[] } {
    return { y: Array.from(this.y), u: Array.from(this.u) };
  }

  restore(s: { y: number[]; u: number[] } | null | undefined): boolean {
    if (!s || !Array.isArray(s.y) || !Array.isArray(s.u) || s.y.length !== this.y.length || s.u.length !== this.u.length) return false;
    if (![...s.y, ...s.u].every((v) => typeof v === "number" && Number.isFinite(v))) return false;
    this.y.set(s.y);
    this.u.set(s.u);
    return true;
  }
}


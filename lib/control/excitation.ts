/**
 * Excitation test: is the recent data rich enough to identify every parameter?
 *
 * The recent information matrix is the exponentially weighted mean
 *   R(k) = (1 - mu) sum_i mu^(k - i) phi(i) phi(i)'   (units: regressor units squared)
 * and the data excite the model when its smallest eigenvalue is clearly above zero (persistent
 * excitation; Ljung, *System Identification*, 2nd ed., 1999, sec. 13.2; Åström & Wittenmark,
 * *Adaptive Control*, 2nd ed., 1995, sec. 2.4). Because regressors carry plant units, the
 * verdict uses the larger of an absolute floor and a fraction of the largest eigenvalue, so it
 * does not depend on the loop's engineering units. Under a velocity-form PI at a constant set
 * point the ARX regressors are exactly collinear, and the smallest eigenvalue collapses to
 * rounding level: such data are reported as not exciting.
 *
 * Accumulating R costs n^2 multiply-adds per sample; the eigenvalues (Jacobi) are computed only
 * every `every` samples.
 */
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import { symmetricEigenvalues } from "./linalg";

export interface ExcitationVerdict {
  /** Smallest eigenvalue of the recent information matrix (regressor units squared). */
  minEigenvalue: number;
  /** Largest eigenvalue (same units). */
  maxEigenvalue: number;
  /** Threshold the smallest eigenvalue was compared against (same units). */
  threshold: number;
  /** minEigenvalue / maxEigenvalue (0 when the matrix is zero): dimensionless. */
  ratio: number;
  excited: boolean;
}

export interface ExcitationOptions {
  /** Absolute floor for the smallest eigenvalue (regressor units squared); default 1e-12. */
  absoluteThreshold?: number;
  /** Fraction of the largest eigenvalue the smallest must reach; default 1e-4. */
  relativeThreshold?: number;
}

/**
 * Judge an n x n information matrix (row-major, symmetric). `threshold` in the result is
 * max(absoluteThreshold, relativeThreshold * maxEigenvalue).
 */
export function excitationLevel(information: Float64Array, n: number, options: ExcitationOptions = {}): ExcitationVerdict {
  if (information.length < n * n) throw new ControlArgumentError(`information matrix must have ${n * n} entries`);
  for (let i = 0; i < n * n; i++) {
    if (!Number.isFinite(information[i]!)) throw new NonFiniteInputError(`information[${i}]`);
  }
  const abs = options.absoluteThreshold ?? 1e-12;
  const rel = options.relativeThreshold ?? 1e-4;
  const ev = symmetricEigenvalues(information, n);
  const minEigenvalue = ev[0]!;
  const maxEigenvalue = ev[n - 1]!;
  const threshold = Math.max(abs, rel * maxEigenvalue);
  return {
    minEigenvalue,
    maxEigenvalue,
    threshold,
    ratio: maxEigenvalue > 0 ? minEigenvalue / maxEigenvalue : 0,
    excited: minEigenvalue >= threshold && maxEigenvalue > 0,
  };
}

export interface ExcitationMonitorOptions extends ExcitationOptions {
  /** Number of regressor entries n. */
  parameters: number;
  /** Weight mu of the running mean in (0, 1); default 0.99 (memory ~100 samples). */
  memory?: number;
  /** Re-evaluate the eigenvalues every this many samples; default 25. */
  every?: number;
}

/** Running excitation test over the regressors fed to `add` (see the module comment). */
export class ExcitationMonitor {
  readonly n: number;
  readonly memory: number;
  readonly every: number;
  private readonly opts: ExcitationOptions;
  private readonly info: Float64Array;
  private count = 0;
  private sinceEval = 0;
  private last: ExcitationVerdict | null = null;

  constructor(options: ExcitationMonitorOptions) {
    const n = options.parameters;
    if (!Number.isInteger(n) || n < 1) throw new ControlArgumentError(`parameters must be an integer >= 1, got ${n}`);
    const mu = options.memory ?? 0.99;
    if (!(mu > 0 && mu < 1)) throw new ControlArgumentError(`memory must be in (0, 1), got ${mu}`);
    const every = options.every ?? 25;
    if (!Number.isInteger(every) || every < 1) throw new ControlArgumentError(`every must be an integer >= 1, got ${every}`);
    this.n = n;
    this.memory = mu;
    this.every = every;
    this.opts = { absoluteThreshold: options.absoluteThreshold, relativeThreshold: options.relativeThreshold };
    this.info = new Float64Array(n * n);
  }

  /** Samples added since construction or `reset()`. */
  get samples(): number {
    return this.count;
  }

  /** Fold one regressor into R (no allocation). The caller has checked it is finite. */
  add(phi: ArrayLike<number>): void {
    const n = this.n;
    const mu = this.memory;
    const w = 1 - mu;
    const R = this.info;
    for (let i = 0; i < n; i++) {
      const wi = w * phi[i]!;
      for (let j = i; j < n; j++) {
        const v = mu * R[i * n + j]! + wi * phi[j]!;
        R[i * n + j] = v;
        R[j * n + i] = v;
      }
    }
    this.count++;
    this.sinceEval++;
    if (this.sinceEval >= this.every) {
      this.sinceEval = 0;
      this.last = excitationLevel(R, n, this.opts);
    }
  }

  /**
   * The latest verdict (recomputed every `every` samples). Before the first evaluation, and
   * until about one memory length of samples has been seen, `excited` is false.
   */
  verdict(): ExcitationVerdict {
    if (!this.last) {
      return { minEigenvalue: 0, maxEigenvalue: 0, threshold: this.opts.absoluteThreshold ?? 1e-12, ratio: 0, excited: false };
    }
    const warm = this.count >= Math.min(1 / (1 - this.memory), 10 * this.n);
    return warm ? this.last : { ...this.last, excited: false };
  }

  /** `verdict().excited` without allocating (per-sample path). */
  isExcited(): boolean {
    return this.last !== null && this.last.excited && this.count >= Math.min(1 / (1 - this.memory), 10 * this.n);
  }

  /** Evaluate now (outside the every-N schedule). */
  evaluate(): ExcitationVerdict {
    this.last = excitationLevel(this.info, this.n, this.opts);
    this.sinceEval = 0;
    return this.verdict();
  }

  /** The recent information matrix as a copy (row-major). */
  information(): Float64Array {
    return Float64Array.from(this.info);
  }

  reset(): void {
    this.info.fill(0);
    this.count = 0;
    this.sinceEval = 0;
    this.last = null;
  }

  /** Serialisable state. */
  toJSON(): { information: number[]; samples: number } {
    return { information: Array.from(this.info), samples: this.count };
  }

  /** Restore from `toJSON()` output (checked; state untouched on error). */
  restore(state: { information: number[]; samples: number }): void {
    if (!state || !Array.isArray(state.information) || state.information.length !== this.n * this.n) {
      throw new ControlArgumentError(`excitation state: information must have ${this.n * this.n} entries`);
    }
    state.information.forEach((v, i) => {
      if (typeof v !== "number" || !Number.isFinite(v)) throw new NonFiniteInputError(`excitation state information[${i}]`);
    });
    if (!Number.isInteger(state.samples) || state.samples < 0) throw new ControlArgumentError("excitation state: samples must be an integer >= 0");
    this.info.set(state.information);
    this.count = state.samples;
    this.sinceEval = 0;
    this.last = excitationLevel(this.info, this.n, this.opts);
  }
}

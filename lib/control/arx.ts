/**
 * ARX identification online: `ArxEstimator` (RLS); the batch fit (`fitArx`, `estimateDelay`,
 * `simulateArx`) is in `arx-batch.ts`.
 *
 * Model (Ljung, *System Identification: Theory for the User*, 2nd ed., 1999, sec. 4.2):
 *   A(q) y(k) = B(q) u(k - nk) + e(k),  A = 1 + a1 q^-1 + ... + a_na q^-na,  B = b0 + ... + b_{nb-1} q^-(nb-1)
 * `a` holds a1..a_na (no leading 1), `b` holds b0..b_{nb-1}, nk >= 1 samples, T seconds.
 * Regressor phi(k) = [-y(k-1) .. -y(k-na), u(k-nk) .. u(k-nk-nb+1)] (plus a trailing 1 in "offset" mode).
 *
 * Operating point (`operatingPoint`):
 * - "mean" (default): u and y are detrended by a slowly tracked mean m(k) = mu m(k-1) + (1 - mu) x(k)
 *   (`meanMemory` mu, default 0.999; the plain running mean over the first 1/(1 - mu) samples),
 *   i.e. both signals pass the same high-pass filter 1 - EWMA.
 *   A linear filter applied to input and output alike leaves the ARX relation intact (data
 *   prefiltering, Ljung 1999 sec. 14.1); at steady state the regressor shrinks to zero, so a
 *   quiet loop contributes no (misleading) information.
 * - "offset": raw u and y with a constant regressor 1 (its parameter is `offset`).
 * - "none": raw u and y (only for data that are already deviations).
 */
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import { ExcitationMonitor, type ExcitationVerdict } from "./excitation";
import { shiftIn } from "./lag";
import { RecursiveLeastSquares, type RlsState, type WindupGuard } from "./rls";
import type { ArxModel } from "./types";

export type OperatingPointMode = "mean" | "offset" | "none";

export interface ArxEstimatorOptions {
  /** Number of a coefficients (>= 1). */
  na: number;
  /** Number of b coefficients (>= 1). */
  nb: number;
  /** Input delay in samples (>= 1). */
  nk: number;
  /** RLS forgetting factor lambda in (0, 1]; default 0.995. */
  forgetting?: number;
  /** Sample period in seconds; default 1 (then times are in samples). */
  T?: number;
  /** RLS wind-up guard; default "directional". */
  windup?: WindupGuard;
  /** Initial covariance scalar p0 (P0 = p0 I); default 1000. */
  initialCovariance?: number;
  /** Operating-point handling; default "mean". */
  operatingPoint?: OperatingPointMode;
  /** Weight mu of the tracked mean in (0, 1); default 0.999 (about 1000 samples). */
  meanMemory?: number;
  /** "excitation" (default): update only while the excitation test passes; "none": always. */
  gating?: "excitation" | "none";
  /** Excitation monitor memory in (0, 1); default 0.99. */
  excitationMemory?: number;
  /** Excitation re-evaluation interval in samples; default 25. */
  excitationEvery?: number;
  /** Smallest-to-largest eigenvalue ratio below which data count as not exciting; default 1e-4. */
  excitationRelativeThreshold?: number;
  /** Absolute floor for the smallest eigenvalue (regressor units squared); default 1e-12. */
  excitationAbsoluteThreshold?: number;
}

/** Serialisable estimator state (`toJSON` / `ArxEstimator.fromJSON`). */
export interface ArxEstimatorState {
  version: 1;
  options: Required<ArxEstimatorOptions>;
  rls: RlsState;
  yHistory: number[];
  uHistory: number[];
  meanU: number;
  meanY: number;
  samples: number;
  loss: number;
  effectiveCount: number;
  excitation: { information: number[]; samples: number };
}

export function checkInt(name: string, v: number, min: number): void {
  if (!Number.isInteger(v) || v < min) throw new ControlArgumentError(`${name} must be an integer >= ${min}, got ${v}`);
}

export function checkPeriod(T: number): void {
  if (!(T > 0) || !Number.isFinite(T)) throw new ControlArgumentError(`T must be a finite number of seconds > 0, got ${T}`);
}

/**
 * Online ARX(na, nb, nk) estimator by recursive least squares (see `RecursiveLeastSquares`),
 * with operating-point removal, excitation gating and checkpointable state.
 */
export class ArxEstimator {
  readonly na: number;
  readonly nb: number;
  readonly nk: number;
  readonly T: number;
  readonly options: Readonly<Required<ArxEstimatorOptions>>;
  readonly rls: RecursiveLeastSquares;
  readonly excitationMonitor: ExcitationMonitor;
  /** a-priori error of the last RLS update (NaN before the first). */
  lastError = NaN;
  private readonly d: number;
  private readonly phi: Float64Array;
  private readonly yHist: Float64Array;
  private readonly uHist: Float64Array;
  private meanU = 0;
  private meanY = 0;
  private count = 0;
  private loss = 0;
  private neff = 0;

  constructor(options: ArxEstimatorOptions) {
    checkInt("na", options.na, 1);
    checkInt("nb", options.nb, 1);
    checkInt("nk", options.nk, 1);
    const T = options.T ?? 1;
    checkPeriod(T);
    const op = options.operatingPoint ?? "mean";
    if (op !== "mean" && op !== "offset" && op !== "none") throw new ControlArgumentError(`operatingPoint must be "mean", "offset" or "none", got ${String(op)}`);
    const gating = options.gating ?? "excitation";
    if (gating !== "excitation" && gating !== "none") throw new ControlArgumentError(`gating must be "excitation" or "none", got ${String(gating)}`);
    const meanMemory = options.meanMemory ?? 0.999;
    if (!(meanMemory > 0 && meanMemory < 1)) throw new ControlArgumentError(`meanMemory must be in (0, 1), got ${meanMemory}`);
    this.options = {
      na: options.na,
      nb: options.nb,
      nk: options.nk,
      forgetting: options.forgetting ?? 0.995,
      T,
      windup: options.windup ?? "directional",
      initialCovariance: options.initialCovariance ?? 1000,
      operatingPoint: op,
      meanMemory,
      gating,
      excitationMemory: options.excitationMemory ?? 0.99,
      excitationEvery: options.excitationEvery ?? 25,
      excitationRelativeThreshold: options.excitationRelativeThreshold ?? 1e-4,
      excitationAbsoluteThreshold: options.excitationAbsoluteThreshold ?? 1e-12,
    };
    this.na = options.na;
    this.nb = options.nb;
    this.nk = options.nk;
    this.T = T;
    this.d = this.na + this.nb + (op === "offset" ? 1 : 0);
    this.rls = new RecursiveLeastSquares({
      parameters: this.d,
      forgetting: this.options.forgetting,
      initialCovariance: this.options.initialCovariance,
      windup: this.options.windup,
      trackErrorCovariance: true,
    });
    this.excitationMonitor = new ExcitationMonitor({
      parameters: this.d,
      memory: this.options.excitationMemory,
      every: this.options.excitationEvery,
      relativeThreshold: this.options.excitationRelativeThreshold,
      absoluteThreshold: this.options.excitationAbsoluteThreshold,
    });
    this.phi = new Float64Array(this.d);
    this.yHist = new Float64Array(this.na);
    this.uHist = new Float64Array(this.nk + this.nb - 1);
  }

  /** Samples pushed (accepted) so far. */
  get samples(): number {
    return this.count;
  }

  /** RLS updates made so far (samples that passed the gate with a full regressor). */
  get updates(): number {
    return this.rls.updates;
  }

  /**
   * Add one sample: u(k) (controller output, % of span or engineering units) and y(k) (PV),
   * both taken at the same instant k. The regressor uses only past values, so u(k) first
   * influences y(k + nk). Updates the model when the regressor is complete, the excitation gate
   * is open (if gating) and `update` is true (pass false in manual mode, at a valve limit, ...).
   * Returns true when the model was updated. Non-finite u or y throws `NonFiniteInputError`
   * before anything changes.
   */
  push(u: number, y: number, update = true): boolean {
    if (!Number.isFinite(u)) throw new NonFiniteInputError("u");
    if (!Number.isFinite(y)) throw new NonFiniteInputError("y");
    const op = this.options.operatingPoint;
    let du = u;
    let dy = y;
    if (op === "mean") {
      // Expanding-window mean until the window reaches 1/(1 - mu) samples, then the EWMA.
      const w = Math.max(1 - this.options.meanMemory, 1 / (this.count + 1));
      this.meanU += w * (u - this.meanU);
      this.meanY += w * (y - this.meanY);
      du = u - this.meanU;
      dy = y - this.meanY;
    }
    const na = this.na;
    const phi = this.phi;
    for (let i = 0; i < na; i++) phi[i] = -this.yHist[i]!;
    for (let j = 0; j < this.nb; j++) phi[na + j] = this.uHist[this.nk - 1 + j]!;
    if (op === "offset") phi[this.d - 1] = 1;
    const full = this.count >= Math.max(na, this.nk + this.nb - 1);
    let updated = false;
    if (full) {
      this.excitationMonitor.add(phi);
      const gateOpen = this.options.gating === "none" || this.excitationMonitor.isExcited();
      if (update && gateOpen) {
        const err = this.rls.update(phi, dy);
        const r = this.rls.lastR;
        const lam = this.rls.forgetting;
        const w = this.rls.windup === "directional" ? 1 / (1 + r) : lam / (lam + r);
        this.loss = lam * this.loss + err * err * w;
        this.neff = lam * this.neff + 1;
        this.lastError = err;
        updated = true;
      }
    }
    shiftIn(this.yHist, dy);
    shiftIn(this.uHist, du);
    this.count++;
    return updated;
  }

  /** The current model { a, b, nk, T } (copies). */
  model(): ArxModel {
    const th = this.rls.theta;
    return {
      a: Array.from(th.subarray(0, this.na)),
      b: Array.from(th.subarray(this.na, this.na + this.nb)),
      nk: this.nk,
      T: this.T,
    };
  }

  /** Estimated constant term in "offset" mode (y units), else 0. */
  get offset(): number {
    return this.options.operatingPoint === "offset" ? this.rls.theta[this.d - 1]! : 0;
  }

  /** Tracked operating point (means of u and y) in "mean" mode. */
  operatingPoint(): { u: number; y: number } {
    return { u: this.meanU, y: this.meanY };
  }

  /**
   * Residual variance sigma^2 of the equation error (y units squared): the exponentially
   * weighted a-posteriori loss divided by (effective sample count - parameters); NaN until the
   * effective count exceeds the number of parameters.
   */
  residualVariance(): number {
    const dof = this.neff - this.d;
    return dof > 0 ? this.loss / dof : NaN;
  }

  /**
   * Covariance of [a1..a_na, b0..b_{nb-1}] (offset excluded), as (na+nb) x (na+nb) nested arrays:
   *   sigma^2 Q, Q the propagated error covariance of the RLS (see below); formerly
   *   sigma^2 P (1 + lambda^k) / (1 + lambda),  k = number of updates.
   * Under exponential forgetting the estimate is a weighted LS with weights lambda^j, whose
   * covariance is sigma^2 (sum w)^-1 (sum w^2) (sum w)^-1 R^-1; with P ~ (sum w R)^-1 this is
   * sigma^2 P (sum w^2)/(sum w) = sigma^2 P (1 + lambda^k)/(1 + lambda): sigma^2 P at lambda = 1, and
   * sigma^2 P / (1 + lambda) in steady state. That factor does not hold under directional
   * forgetting (95 % intervals covered 88-91 % at 500 samples), so the estimator's own error
   * covariance Q, propagated exactly for the gains actually used (`RecursiveLeastSquares`,
   * `trackErrorCovariance`), is used instead: sigma^2 Q (checked by Monte Carlo in the tests).
   */
  parameterCovariance(): number[][] {
    const n = this.na + this.nb;
    const s2 = this.residualVariance();
    const lam = this.rls.forgetting;
    const k = this.rls.updates;
    const Q = this.rls.errorCovariance;
    const factor = Q ? 1 : lam === 1 ? 1 : (1 + lam ** k) / (1 + lam);
    const P = Q ?? this.rls.covariance;
    const d = this.d;
    const out: number[][] = [];
    for (let i = 0; i < n; i++) {
      const row: number[] = [];
      for (let j = 0; j < n; j++) row.push(s2 * factor * P[i * d + j]!);
      out.push(row);
    }
    return out;
  }

  /** The latest excitation verdict of the regressors (see `ExcitationMonitor`). */
  excitation(): ExcitationVerdict {
    return this.excitationMonitor.verdict();
  }

  /** Plain JSON-safe snapshot of everything needed to resume (options, RLS, history, counters). */
  toJSON(): ArxEstimatorState {
    return {
      version: 1,
      options: { ...this.options },
      rls: this.rls.toJSON(),
      yHistory: Array.from(this.yHist),
      uHistory: Array.from(this.uHist),
      meanU: this.meanU,
      meanY: this.meanY,
      samples: this.count,
      loss: this.loss,
      effectiveCount: this.neff,
      excitation: this.excitationMonitor.toJSON(),
    };
  }

  /** Rebuild an estimator from `toJSON()` output; throws `ControlArgumentError` on a malformed state. */
  static fromJSON(state: ArxEstimatorState): ArxEstimator {
    if (!state || state.version !== 1 || typeof state.options !== "object" || state.options === null) {
      throw new ControlArgumentError("ARX estimator state: unknown version or missing options");
    }
    const est = new ArxEstimator(state.options);
    const finite = (name: string, v: unknown): number => {
      if (typeof v !== "number" || !Number.isFinite(v)) throw new NonFiniteInputError(`ARX estimator state ${name}`);
      return v;
    };
    const arr = (name: string, v: unknown, len: number): number[] => {
      if (!Array.isArray(v) || v.length !== len) throw new ControlArgumentError(`ARX estimator state: ${name} must have ${len} entries`);
      return v.map((x, i) => finite(`${name}[${i}]`, x));
    };
    const yh = arr("yHistory", state.yHistory, est.yHist.length);
    const uh = arr("uHistory", state.uHistory, est.uHist.length);
    const meanU = finite("meanU", state.meanU);
    const meanY = finite("meanY", state.meanY);
    const loss = finite("loss", state.loss);
    const neff = finite("effectiveCount", state.effectiveCount);
    if (!Number.isInteger(state.samples) || state.samples < 0) throw new ControlArgumentError("ARX estimator state: samples must be an integer >= 0");
    est.rls.restore(state.rls);
    est.excitationMonitor.restore(state.excitation);
    est.yHist.set(yh);
    est.uHist.set(uh);
    est.meanU = meanU;
    est.meanY = meanY;
    est.loss = loss;
    est.neff = neff;
    est.count = state.samples;
    return est;
  }
}

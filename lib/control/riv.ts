/**
 * Closed-loop ARX identification by instrumental variables with reference instruments
 * (`InstrumentalArxEstimator`).
 *
 * Why: least squares on A(q) y = B(q) u + v is biased when the equation error v is not white.
 * Measurement noise n on the PV enters as v = A(q) n (coloured), and in closed loop u is
 * correlated with n through the controller, so an RLS/ARX estimate of a lightly damped plant
 * comes out too damped and its gain too low (Söderström & Stoica, *System Identification*, 1989,
 * ch. 7-8; Ljung, *System Identification*, 2nd ed., 1999, sec. 7.6 and 13.4).
 *
 * The instrumental-variable estimate (Söderström & Stoica 1989, sec. 8.1; Ljung 1999, sec. 7.6)
 *   theta = [ sum w(k) z(k) phi(k)' ]^-1 [ sum w(k) z(k) y(k) ]
 * is consistent whenever the instruments z(k) are uncorrelated with v(k) and correlated with the
 * regressor phi(k) = [-y(k-1) .. -y(k-na), u(k-nk) .. u(k-nk-nb+1)]. In closed loop the set point
 * r is external (uncorrelated with the noise), so its delayed values are valid instruments
 * (closed-loop IV, Söderström & Stoica 1989 sec. 10.4; Gilson & Van den Hof, "Instrumental
 * variable methods for closed-loop system identification", Automatica 41, 2005):
 *   z(k) = [r(k-nk), r(k-nk-1), ..., r(k-nk-d+1)],  d = na + nb.
 * While the loop is open (manual), the MV itself is the external signal and its delayed values
 * serve instead: z(k) = [u(k-nk), ..., u(k-nk-d+1)] ("input instruments", same references). They
 * must include u(k-nk): with a white MV, u(k-nk) is uncorrelated with every older input, so
 * instruments that start at u(k-nk-1) leave sum z phi' singular along b0.
 *
 * Once an estimate exists and the controller C(q) is known (`controller` option), the instruments
 * are the noise-free regressor of an auxiliary model (./riv-auxiliary.ts: the closed loop of the
 * current plant estimate with C, driven by r alone; open loop, the estimate driven by the
 * measured MV), which correlates with phi far better than delayed set points.
 *
 * Weighting: exponential forgetting with factor lambda, applied only on samples whose instrument
 * carries information (|z|_inf above `instrumentThreshold`). With data-independent instruments
 * that are zero between set-point moves, the sums would otherwise only shrink (both alike, so the
 * estimate would not move) until rounding takes over; counting memory in informative samples
 * keeps the last few moves' information however long the loop then sits still, and the estimate
 * is held, not drifted by noise, while nothing excites it (the age of the last informative
 * sample is reported).
 *
 * The sums are kept as d x d and d arrays and the normal equations are solved by Gaussian
 * elimination with partial pivoting into preallocated buffers (`solveInto`): O(d^2) per sample,
 * O(d^3) per solve, no allocation per sample. Covariance: the IV sandwich with the equation
 * error's autocovariance at the reported estimate (./riv-covariance.ts), its sums over every sample
 * in R; in manual (white MV, PV noise 0.3, 500 samples, 1,000 seeded runs on seed bases 1000, 5000,
 * 9000): 94.9, 97.2, 96.5 % covered (restarted at the auxiliary model's start: 92.8, 94.8, 95.2 %).
 * In manual the auxiliary model starts after 25 informative samples per parameter; earlier, a poor
 * estimate driven by the MV gave instruments that spoiled the sums (pole errors of 38 seen).
 */
import { ControlArgumentError, NonFiniteInputError } from "./errors";
import { shiftIn } from "./lag-vector";
import { solveInto } from "./linalg";
import { AuxiliaryModel, type AuxiliaryState } from "./riv-auxiliary";
import { ivCovariance, ScoreSum, type ScoreSumState } from "./riv-covariance";
import type { ArxModel } from "./types";

export interface InstrumentalArxOptions {
  na: number;
  nb: number;
  nk: number;
  /** Sample period, seconds; default 1. */
  T?: number;
  /** Forgetting factor per informative sample, (0, 1]; default 0.995. */
  forgetting?: number;
  /** Smallest |z|_inf (signal units) for a sample to count as informative; default 1e-3. */
  instrumentThreshold?: number;
  /** Weight of the running residual variance (all samples), (0, 1); default 0.995. */
  residualMemory?: number;
  /** Lags of the equation error's autocovariance in the covariance; default na (A(q) n is MA(na)); prefiltered data: add `prefilterNoiseLags`. */
  noiseLags?: number;
  /** The loop's controller u = C(q) (r - y) as num/den in ascending powers of q^-1 (den[0] != 0), for auxiliary-model instruments; default none. */
  controller?: { num: readonly number[]; den: readonly number[] } | null;
}

export interface InstrumentalArxState {
  version: 1;
  options: Required<Omit<InstrumentalArxOptions, "controller">> & { controller: { num: number[]; den: number[] } | null };
  R: number[];
  f: number[];
  Szz: number[];
  theta: number[];
  yHistory: number[];
  uHistory: number[];
  rHistory: number[];
  informative: number;
  effective: number;
  samples: number;
  residual: number;
  residualWeight: number;
  /** Weighted sums of 1, y and y² over the samples and weights of `residual` (absent in older states: they start afresh). */
  ySum?: number;
  ySquares?: number;
  yWeight?: number;
  sinceInformative: number;
  solved: boolean;
  conditioning: number;
  /** Auxiliary model: simulated y, u, e histories, run length, simulation-error sums. */
  aux: AuxiliaryState;
  /** Noise-autocovariance sums of the covariance (field name kept; absent or from an older version: they start empty and the white-noise covariance serves meanwhile). */
  hac?: ScoreSumState & { openAuxStarted?: boolean };
}

/** Open loop: informative samples per parameter before the auxiliary-model instruments take over. */
export const OPEN_AUX_MIN_PER_PARAMETER = 25;

function checkInt(name: string, v: number, min: number): void {
  if (!Number.isInteger(v) || v < min) throw new ControlArgumentError(`${name} must be an integer >= ${min}, got ${v}`);
}

/**
 * Recursive instrumental-variable ARX estimator for closed-loop data (method in the file header):
 * push(u, y, r) per sample at period T (seconds); model() gives descending-power A and B with nk
 * and T; parameterCovariance() the IV covariance scaled by the residual variance.
 */
export class InstrumentalArxEstimator {
  readonly na: number;
  readonly nb: number;
  readonly nk: number;
  readonly T: number;
  readonly d: number;
  readonly options: Readonly<Required<Omit<InstrumentalArxOptions, "controller">>> & { readonly controller: { num: number[]; den: number[] } | null };
  /** Current estimate [a1..a_na, b0..b_{nb-1}] (live view). */
  readonly theta: Float64Array;
  /** Informative samples accumulated (not decayed). */
  informative = 0;
  /** Samples pushed since the last informative one (Infinity before the first). */
  sinceInformative = Infinity;
  /** Pivot ratio |min pivot| / |max pivot| of the last solve (0 = singular); a conditioning indicator. */
  conditioning = 0;
  /** Whether `theta` holds a solution of the current sums (false before the first good solve). */
  solved = false;
  private readonly R: Float64Array;
  private readonly f: Float64Array;
  private readonly Szz: Float64Array;
  private readonly phi: Float64Array;
  private readonly z: Float64Array;
  private readonly M: Float64Array;
  private readonly x: Float64Array;
  private readonly yHist: Float64Array;
  private readonly uHist: Float64Array;
  private readonly rHist: Float64Array;
  private effective = 0;
  private count = 0;
  private residual = 0;
  private residualWeight = 0;
  /** y's weighted sum and sum of squares over the same samples and weights as `residual` (outputVariance). */
  private ySum = 0;
  private ySquares = 0;
  private yWeight = 0;
  private dirty = false;
  private readonly aux: AuxiliaryModel;
  private readonly scores: ScoreSum;

  constructor(options: InstrumentalArxOptions) {
    checkInt("na", options.na, 1);
    checkInt("nb", options.nb, 1);
    checkInt("nk", options.nk, 1);
    checkInt("noiseLags", options.noiseLags ?? options.na, 0);
    const T = options.T ?? 1;
    if (!(T > 0) || !Number.isFinite(T)) throw new ControlArgumentError(`T must be a finite number of seconds > 0, got ${T}`);
    const lam = options.forgetting ?? 0.995;
    if (!(lam > 0 && lam <= 1)) throw new ControlArgumentError(`forgetting must be in (0, 1], got ${lam}`);
    const thr = options.instrumentThreshold ?? 1e-3;
    if (!(thr >= 0) || !Number.isFinite(thr)) throw new ControlArgumentError(`instrumentThreshold must be a finite number >= 0, got ${thr}`);
    const rm = options.residualMemory ?? 0.995;
    if (!(rm > 0 && rm < 1)) throw new ControlArgumentError(`residualMemory must be in (0, 1), got ${rm}`);
    let controller: { num: number[]; den: number[] } | null = null;
    if (options.controller) {
      const num = Array.from(options.controller.num);
      const den = Array.from(options.controller.den);
      if (num.length === 0 || den.length === 0 || !(den[0] !== 0) || ![...num, ...den].every(Number.isFinite)) {
        throw new ControlArgumentError("controller must have finite num and den coefficients with den[0] != 0");
      }
      controller = { num, den };
    }
    const noiseLags = options.noiseLags ?? options.na;
    this.options = { na: options.na, nb: options.nb, nk: options.nk, T, forgetting: lam, instrumentThreshold: thr, residualMemory: rm, noiseLags, controller };
    this.na = options.na;
    this.nb = options.nb;
    this.nk = options.nk;
    this.T = T;
    const d = (this.d = this.na + this.nb);
    this.theta = new Float64Array(d);
    this.R = new Float64Array(d * d);
    this.f = new Float64Array(d);
    this.Szz = new Float64Array(d * d);
    this.phi = new Float64Array(d);
    this.z = new Float64Array(d);
    this.M = new Float64Array(d * (d + 1));
    this.x = new Float64Array(d);
    this.yHist = new Float64Array(this.na);
    // u and r lags up to nk + d (the input instruments reach one sample further than the regressor)
    this.uHist = new Float64Array(this.nk + d + 1);
    this.rHist = new Float64Array(this.nk + d);
    this.aux = new AuxiliaryModel(this.na, this.nb, this.nk, controller, rm);
    this.scores = new ScoreSum(d, noiseLags, lam);
  }

  /** Samples pushed so far. */
  get samples(): number {
    return this.count;
  }

  /**
   * Add one sample: u(k) (MV), y(k) (PV), r(k) (set point), all deviations (e.g. prefiltered).
   * `mode` "closed" uses set-point instruments, "open" (manual: the MV is external) input
   * instruments, "skip" updates nothing but the histories (saturated, flat-lined ...).
   * Returns true when the sample was informative and entered the sums.
   */
  push(u: number, y: number, r: number, mode: "closed" | "open" | "skip" = "closed"): boolean {
    if (!Number.isFinite(u)) throw new NonFiniteInputError("u");
    if (!Number.isFinite(y)) throw new NonFiniteInputError("y");
    if (!Number.isFinite(r)) throw new NonFiniteInputError("r");
    const { na, nb, nk, d } = this;
    const phi = this.phi;
    for (let i = 0; i < na; i++) phi[i] = -this.yHist[i]!;
    for (let j = 0; j < nb; j++) phi[na + j] = this.uHist[nk - 1 + j]!;
    let used = false;
    if (this.count >= nk + d + 1) {
      // residual of the current estimate, every sample (noise level for the covariance and the fit)
      let prior = NaN;
      if (this.solved) {
        prior = y;
        for (let i = 0; i < d; i++) prior -= phi[i]! * this.theta[i]!;
        const w = this.options.residualMemory;
        this.residual = w * this.residual + prior * prior;
        this.residualWeight = w * this.residualWeight + 1;
        this.ySum = w * this.ySum + y;
        this.ySquares = w * this.ySquares + y * y;
        this.yWeight = w * this.yWeight + 1;
      }
      // skip: the real loop is open or the data are void, the noise-free copy restarts afterwards
      if (mode === "skip") this.aux.restart();
      else used = this.accumulate(u, y, r, mode === "open");
    }
    if (!used) this.sinceInformative++;
    if (na > 0) shiftIn(this.yHist, y);
    shiftIn(this.uHist, u);
    shiftIn(this.rHist, r);
    this.count++;
    // solve at most once per informative stretch sample; cheap for the small d of a loop model
    if (used) this.solve();
    return used;
  }

  /** Instruments of this sample and, when informative, its terms in the sums. */
  private accumulate(u: number, y: number, r: number, open: boolean): boolean {
    const { nk, d } = this;
    const z = this.z;
    const phi = this.phi;
    const aux = this.aux;
    // open loop: the auxiliary model only once the estimate rests on enough samples (a poor early
    // estimate driven by the MV gives instruments that spoil the sums; seen: pole errors of 38)
    const useAux = this.solved && (open ? this.informative >= OPEN_AUX_MIN_PER_PARAMETER * d : this.options.controller !== null);
    // the covariance sums go on across the switch: R still holds the samples of the delayed-MV
    // instruments, so S must too (restarting them here left intervals too narrow, ./riv-covariance.ts)
    aux.lastSimError = NaN;
    if (useAux) aux.step(this.theta, u, y, r, open, z);
    if (!(useAux && aux.run > nk + d)) {
      const lags = open ? this.uHist : this.rHist;
      for (let i = 0; i < d; i++) z[i] = lags[nk - 1 + i]!;
    }
    let zmax = 0;
    for (let i = 0; i < d; i++) zmax = Math.max(zmax, Math.abs(z[i]!));
    if (!(zmax > this.options.instrumentThreshold)) return false;
    const lam = this.options.forgetting;
    const R = this.R;
    const S = this.Szz;
    for (let i = 0; i < d; i++) {
      const zi = z[i]!;
      for (let j = 0; j < d; j++) {
        R[i * d + j] = lam * R[i * d + j]! + zi * phi[j]!;
        S[i * d + j] = lam * S[i * d + j]! + zi * z[j]!;
      }
      this.f[i] = lam * this.f[i]! + zi * y;
    }
    this.effective = lam * this.effective + 1;
    this.scores.add(z, phi, y);
    if (useAux) aux.recordSimError();
    this.informative++;
    this.sinceInformative = 0;
    this.dirty = true;
    return true;
  }

  /**
   * Solve R theta = f into `theta` when the sums changed (Gaussian elimination, partial
   * pivoting). A (nearly) singular R keeps the previous estimate. Returns whether theta is solved.
   */
  solve(): boolean {
    if (!this.dirty) return this.solved;
    this.dirty = false;
    const ratio = solveInto(this.R, this.f, this.d, this.M, this.x);
    if (ratio === 0) this.conditioning = 0;
    if (!(ratio > 0)) return this.solved;
    this.conditioning = ratio;
    this.theta.set(this.x);
    this.solved = true;
    return true;
  }

  /** The current model { a, b, nk, T } (copies). */
  model(): ArxModel {
    this.solve();
    return { a: Array.from(this.theta.subarray(0, this.na)), b: Array.from(this.theta.subarray(this.na)), nk: this.nk, T: this.T };
  }

  /** Exponentially weighted mean squared residual of the current estimate over all samples (NaN before a solve). */
  residualVariance(): number {
    return this.residualWeight > this.d ? this.residual / this.residualWeight : NaN;
  }

  /**
   * Weighted variance of y over exactly the samples and weights of residualVariance(), so that
   * 1 − √(residualVariance / outputVariance) is the usual fit figure of a one-step predictor
   * against y's own mean on the same data (NaN until as many samples as residualVariance needs).
   */
  outputVariance(): number {
    if (!(this.yWeight > this.d)) return NaN;
    const m = this.ySum / this.yWeight;
    return Math.max(0, this.ySquares / this.yWeight - m * m);
  }

  /**
   * Mean squared closed-loop simulation error: the measured y minus the output of the auxiliary
   * model (the current estimate, or the held one while the current one's closed loop is unstable)
   * in closed loop with the controller, driven by the set point alone (exponentially weighted over
   * `residualMemory`, informative samples only). It includes the disturbance response no model
   * predicts, so it serves to compare structures on the same data, not as an absolute figure
   * (NaN before 20 samples). */
  simulationError(): number {
    return this.aux.simulationError();
  }

  /** Effective number of informative samples in the sums (decayed by the forgetting). */
  get effectiveCount(): number {
    return this.effective;
  }

  /**
   * Approximate covariance of [a, b] (nested d x d): R^-1 S R^-T (./riv-covariance.ts), or before
   * that has enough samples or is not positive on the diagonal the white-equation-error form
   * sigma^2 R^-1 Szz R^-T (1 + lambda^n)/(1 + lambda). NaN when not available. Allocates.
   */
  parameterCovariance(): number[][] {
    const d = this.d;
    const s2 = this.residualVariance();
    const nan = () => Array.from({ length: d }, () => new Array<number>(d).fill(NaN));
    if (!Number.isFinite(s2) || !this.solved) return nan();
    const lam = this.options.forgetting;
    // sum w^2 z z' ~ Szz (sum w^2)/(sum w) = Szz (1 + lambda^n)/(1 + lambda)
    const factor = lam === 1 ? 1 : (1 + lam ** this.informative) / (1 + lam);
    return ivCovariance(this.R, this.Szz, this.scores, this.theta, s2, factor, d);
  }

  toJSON(): InstrumentalArxState {
    return {
      version: 1,
      options: { ...this.options },
      R: Array.from(this.R),
      f: Array.from(this.f),
      Szz: Array.from(this.Szz),
      theta: Array.from(this.theta),
      yHistory: Array.from(this.yHist),
      uHistory: Array.from(this.uHist),
      rHistory: Array.from(this.rHist),
      informative: this.informative,
      effective: this.effective,
      samples: this.count,
      residual: this.residual,
      residualWeight: this.residualWeight,
      ySum: this.ySum,
      ySquares: this.ySquares,
      yWeight: this.yWeight,
      sinceInformative: Number.isFinite(this.sinceInformative) ? this.sinceInformative : -1,
      solved: this.solved,
      conditioning: this.conditioning,
      aux: this.aux.toJSON(),
      hac: this.scores.toJSON(),
    };
  }

  static fromJSON(s: InstrumentalArxState): InstrumentalArxEstimator {
    if (!s || s.version !== 1 || typeof s.options !== "object" || s.options === null) throw new ControlArgumentError("IV estimator state: unknown version or missing options");
    const est = new InstrumentalArxEstimator(s.options);
    const arr = (name: string, v: unknown, len: number): number[] => {
      if (!Array.isArray(v) || v.length !== len) throw new ControlArgumentError(`IV estimator state: ${name} must have ${len} entries`);
      return v.map((x, i) => {
        if (typeof x !== "number" || !Number.isFinite(x)) throw new NonFiniteInputError(`IV estimator state ${name}[${i}]`);
        return x;
      });
    };
    const num = (name: string, v: unknown): number => {
      if (typeof v !== "number" || !Number.isFinite(v)) throw new NonFiniteInputError(`IV estimator state ${name}`);
      return v;
    };
    const d = est.d;
    est.R.set(arr("R", s.R, d * d));
    est.f.set(arr("f", s.f, d));
    est.Szz.set(arr("Szz", s.Szz, d * d));
    est.theta.set(arr("theta", s.theta, d));
    est.yHist.set(arr("yHistory", s.yHistory, est.yHist.length));
    est.uHist.set(arr("uHistory", s.uHistory, est.uHist.length));
    est.rHist.set(arr("rHistory", s.rHistory, est.rHist.length));
    est.informative = num("informative", s.informative);
    est.effective = num("effective", s.effective);
    est.count = num("samples", s.samples);
    est.residual = num("residual", s.residual);
    est.residualWeight = num("residualWeight", s.residualWeight);
    // a state from before the output sums starts them afresh (the fit reads them after a memory of samples)
    if (s.ySum !== undefined && s.ySquares !== undefined && s.yWeight !== undefined) {
      est.ySum = num("ySum", s.ySum);
      est.ySquares = num("ySquares", s.ySquares);
      est.yWeight = num("yWeight", s.yWeight);
    }
    const since = num("sinceInformative", s.sinceInformative);
    est.sinceInformative = since < 0 ? Infinity : since;
    est.solved = s.solved === true;
    est.conditioning = num("conditioning", s.conditioning);
    if (!s.aux || typeof s.aux !== "object") throw new ControlArgumentError("IV estimator state: aux missing");
    est.aux.load(s.aux, arr, num);
    if (s.hac) est.scores.load(s.hac, arr, num);
    return est;
  }
}

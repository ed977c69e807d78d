/**
 * A tracker's estimation step (docs/architecture.md §4): every estimation sample passes the
 * sample gate (./sample-gate.ts), is prefiltered (./conditioning.ts) and feeds the two plant
 * estimators and the data-only model (./data-model.ts); the reported plant is chosen here
 * (./plant-choice.ts), with the last physical one held while the current estimate is not.
 * Why learning is gated: the estimators learn only from informative samples (a set-point move, or
 * an operator's MV move in manual), so the estimate is held, not drifted by noise, while nothing
 * excites it.
 */
import { InstrumentalArxEstimator, type InstrumentalArxState } from "@/lib/control/riv";
import { prefilterNoiseLags } from "@/lib/control/riv-covariance";
import { ArxEstimator } from "@/lib/control/arx";
import type { ArxModel, QTf } from "@/lib/control/types";
import { NEVER, type EstimationInput, type TrackerCheckpoint } from "./checkpoint";
import { PREFILTER_POLE, type SignalConditioner } from "./conditioning";
import { DataOnlyModel } from "./data-model";
import type { RadiusDrift, DriftNoiseOption } from "./drift-source";
import { RecordedDrift } from "./drift-checkpoint";
import { choosePlant, plausibility, reducedOrderMisfit } from "./plant-choice";
import { SampleGate, type GateContext } from "./sample-gate";
import type { LoopConfig } from "./types";

/** Smallest prefiltered instrument (% of span) that counts as information (a set-point move of 0.05 % decays below it in ~40 samples). */
const INSTRUMENT_THRESHOLD_PCT = 1e-3;

export interface EstimationHooks {
  /** After a learnt sample at estimation index k (time t, epoch ms): computes a state when one is due, says whether it did. */
  stateDue(k: number, t: number): boolean;
  /** The estimators were restarted after a numerical failure, for `reason`. */
  restarted(reason: string): void;
}

export interface LastGood {
  model: ArxModel;
  cov: number[][];
  at: number;
  misfit?: number | null;
}

type CheckpointPart = Pick<TrackerCheckpoint, "structure" | "plant" | "plantReduced" | "lastGood" | "data" | "dataBlock" | "estimationSamples" | "lastPlantUpdate" | "lastSpMove" | "robust">;

export class PlantEstimation {
  /** The plant model as reported: `plantFull` or `plantReduced`, whichever simulates the loop better. */
  plant: InstrumentalArxEstimator;
  /** The configured structure (na, nb, nk). */
  plantFull: InstrumentalArxEstimator;
  /** One pole fewer (na - 1, nb, nk) when na >= 2: an IV estimate of an over-parameterised model
   * is ill-determined along the pole-zero cancellation direction, so a first-order plant fitted
   * with na = 2 shows a spurious closed-loop pole anywhere, even outside the unit circle. */
  plantReduced: InstrumentalArxEstimator | null;
  /** The data-only closed-loop model (./data-model.ts). */
  readonly data: DataOnlyModel;
  /** The rim forecast's parameter drift, configured structure (./drift-source.ts), with its checkpoint part (./drift-checkpoint.ts, stamped with `estimationSamples`). */
  readonly drift: RecordedDrift | null;
  /**
   * The last plant model that passed the plausibility check, its covariance and when (estimation
   * samples); `misfit` (reduced-order plant only) widens its dominant pole's interval, null: no
   * interval is claimed for that pole (./plant-choice.ts `reducedOrderMisfit`).
   */
  lastGood: LastGood | null = null;
  /** Why the current estimate is not physical (null when it is), from the last state computation. */
  implausible: string | null = null;
  /** Informative samples the plant estimate needs before it is reported. */
  readonly minUpdates: number;
  /** Outlier handling, taint and the fit watch (./sample-gate.ts). */
  readonly gate: SampleGate;
  private lastR: number | null = null;

  // counters (in estimation samples)
  estimationSamples = 0;
  lastPlantUpdate = -Infinity;
  lastSpMove = -Infinity;
  /** Running mean and variance of the filtered PV, for the fit figure. */

  constructor(
    private readonly config: LoopConfig,
    private readonly estimationPeriodS: number,
    private readonly controller: QTf,
    private readonly memory: number,
    private readonly cond: SignalConditioner,
    private readonly hooks: EstimationHooks,
    /** The parameter drift's forecast window (seconds) and noise model; null: no parameter drift (the rim forecast from the radius history alone). */
    drift: { windowS: number; noise?: DriftNoiseOption } | null,
  ) {
    // informative samples before the plant model is reported: about two set-point moves' worth on
    // a fast loop (a move of a few % gives 60-80; one move alone left closed-loop radii above 1 on
    // healthy demo loops), capped at 8 minutes of estimation samples on a slow one (a sample
    // every 10-40 s spans several moves by then), never fewer than 6 per parameter
    this.minUpdates = Math.max(6 * (config.na + config.nb), Math.min(100, Math.ceil(480 / estimationPeriodS)));
    this.plantFull = this.makePlantEstimator(config.na);
    this.plantReduced = config.na >= 2 ? this.makePlantEstimator(config.na - 1) : null;
    this.plant = this.plantFull;
    this.data = new DataOnlyModel({ na: config.na, nb: config.nb, nk: config.nk, controller, forgetting: config.forgetting ?? 0.995, T: estimationPeriodS, closedLoopTimeS: config.controller.ti });
    this.gate = new SampleGate(config.na, config.nk + config.nb);
    const { na, nb, nk } = config;
    this.drift = drift === null ? null : new RecordedDrift({ na, nb, nk, T: estimationPeriodS, memoryS: memory * estimationPeriodS, windowS: drift.windowS, controller, instrumentThreshold: INSTRUMENT_THRESHOLD_PCT, lags: na + prefilterNoiseLags(PREFILTER_POLE), ...(drift.noise ? { noise: drift.noise } : {}) }, () => this.estimationSamples);
  }

  /** The drift forecast of radius 1 under `controller` while the configured structure is reported; undefined otherwise (./drift-source.ts). */
  driftForecast(controller: QTf): ReturnType<RadiusDrift["forecast"]> {
    return this.plant === this.plantFull ? this.drift?.forecast(controller) : undefined;
  }

  private makePlantEstimator(na: number): InstrumentalArxEstimator {
    const c = this.config;
    return new InstrumentalArxEstimator({ na, nb: c.nb, nk: c.nk, forgetting: c.forgetting ?? 0.995, T: this.estimationPeriodS, instrumentThreshold: INSTRUMENT_THRESHOLD_PCT, noiseLags: na + prefilterNoiseLags(PREFILTER_POLE), controller: this.controller });
  }

  /** One estimation sample through the gate; true when a state was computed. */
  estimate(sample: EstimationInput): boolean {
    return this.gate.estimate(sample, () => this.gateContext(), (x, outlier) => this.step(x, outlier));
  }

  private gateContext(): GateContext {
    return { plant: this.plant, trusted: this.trusted(), prev: this.cond.prevSignals, filtered: this.cond.filtered };
  }

  /** The reported plant model is the current estimate (the residual test and the fit watch judge with it). */
  private trusted(): boolean {
    return this.plantReady(this.plant) && this.implausible === null && this.lastGood !== null;
  }

  private step(x: EstimationInput, outlier: boolean): boolean {
    const { u, y, r, manual, saturated, flat, t, bad } = x;
    const k = this.estimationSamples++;
    if (this.lastR !== null && Math.abs(r - this.lastR) > 0.05) this.lastSpMove = k;
    this.lastR = r;
    // a block with a stood-in value, and the samples whose regressors still hold it, update nothing
    const tainted = bad || this.gate.taint > 0;
    if (bad) this.gate.taint = this.config.na + this.config.nb + this.config.nk;
    else if (this.gate.taint > 0) this.gate.taint--;
    const learn = !saturated && !flat && !tainted;
    const p = this.plant;
    const pred = this.gate.predictor.predict(p.theta, p.na, p.nb, p.nk);
    // operating point removed by a leaky differencer (./conditioning.ts)
    const f = this.cond.prefilter(u, y, r);
    if (!f) return false;
    if (outlier) this.cond.quality.markOutlier();
    if (!tainted) this.gate.watchFit(x.rawE ?? f.y - pred, this.trusted(), p.informative, this.memory);
    this.gate.predictor.shift(f.y, f.u);
    try {
      const mode = !learn ? "skip" : manual ? "open" : "closed";
      this.drift?.push(f.u, f.y, f.r, mode, t / 1000, this.plantFull.theta, this.plantFull.solved, this.plantReady(this.plantFull) && this.implausible === null);
      if (this.plantFull.push(f.u, f.y, f.r, mode)) this.lastPlantUpdate = k;
      this.plantReduced?.push(f.u, f.y, f.r, mode);
      this.data.push(f.r, f.y, learn && !manual);
    } catch {
      this.restart("estimators restarted after a numerical failure");
    }
    if (!this.parametersFinite()) this.restart("estimators restarted after a numerical overflow");
    return this.hooks.stateDue(k, t);
  }

  fitCollapsed(): boolean {
    return this.gate.fitCollapsed();
  }

  /** The plant estimate can be reported: enough informative samples and a well-posed solution. */
  plantReady(p: InstrumentalArxEstimator = this.plant): boolean {
    return p.solved && p.informative >= this.minUpdates && p.conditioning > 1e-9;
  }

  /** Pick the reported plant (./plant-choice.ts) and judge it; keep it as the last good one when it is physical. */
  choose(action: LoopConfig["controller"]["action"]): void {
    this.plant = choosePlant(this.plantFull, this.plantReduced, (p) => this.plantReady(p), action);
    this.implausible = this.plantReady() ? plausibility(this.plant, action) : null;
    if (this.plantReady() && this.implausible === null) {
      // the current estimate, kept as the last good one (the same objects feed the figures below)
      const misfit = this.plant === this.plantReduced ? reducedOrderMisfit(this.plantFull, this.plantReduced, this.controller) : undefined;
      this.lastGood = { model: this.plant.model(), cov: this.plant.parameterCovariance(), at: this.estimationSamples, ...(misfit === undefined ? {} : { misfit }) };
    }
  }

  private parametersFinite(): boolean {
    const a = this.plantFull.theta;
    const a2 = this.plantReduced?.theta ?? a;
    for (let i = 0; i < a2.length; i++) if (!Number.isFinite(a2[i]!)) return false;
    for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i]!)) return false;
    return this.data.finite();
  }

  private restart(reason: string): void {
    this.plantFull = this.makePlantEstimator(this.config.na);
    this.plantReduced = this.config.na >= 2 ? this.makePlantEstimator(this.config.na - 1) : null;
    this.plant = this.plantFull;
    this.lastGood = null;
    this.implausible = null;
    this.data.reset();
    this.drift?.reset();
    this.gate.reset();
    this.lastPlantUpdate = -Infinity;
    this.hooks.restarted(reason);
  }

  /** The estimators' part of a tracker checkpoint (JSON-safe). */
  toJSON(): Omit<CheckpointPart, "structure"> {
    return {
      plant: this.plantFull.toJSON(),
      plantReduced: this.plantReduced ? this.plantReduced.toJSON() : null,
      lastGood: this.lastGood ? copyLastGood(this.lastGood) : null,
      data: this.data.toJSON(),
      dataBlock: this.data.blockJSON(),
      estimationSamples: this.estimationSamples,
      lastPlantUpdate: Number.isFinite(this.lastPlantUpdate) ? this.lastPlantUpdate : NEVER,
      lastSpMove: Number.isFinite(this.lastSpMove) ? this.lastSpMove : NEVER,
      robust: this.gate.toJSON(),
    };
  }

  /**
   * Resume from a checkpoint whose outer shape was checked (`checkpointProblem`). Returns a reason
   * and touches nothing when the estimator states do not fit this structure.
   * @throws as the estimators' `fromJSON` on a malformed state (nothing touched either).
   */
  restore(cp: CheckpointPart, action: LoopConfig["controller"]["action"]): string | null {
    const plant = InstrumentalArxEstimator.fromJSON(withNoiseLags(cp.plant));
    const reduced = cp.plantReduced ? InstrumentalArxEstimator.fromJSON(withNoiseLags(cp.plantReduced)) : null;
    if (plant.na !== this.config.na || (reduced === null) !== (this.config.na < 2) || (reduced !== null && reduced.na !== this.config.na - 1)) {
      return "checkpoint was made for another model structure or estimation period";
    }
    // a data-only model of another order or period (a checkpoint from before its decimation) starts afresh
    const s = cp.structure;
    const sameData = s.dataOrder === this.data.order && (s.dataDecimation ?? 1) === this.data.decimation;
    const data = sameData ? ArxEstimator.fromJSON(cp.data) : null;
    const lg = cp.lastGood;
    this.lastGood = lg ? copyLastGood(lg) : null;
    this.plantFull = plant;
    this.plantReduced = reduced;
    this.plant = choosePlant(this.plantFull, this.plantReduced, (p) => this.plantReady(p), action);
    if (data) this.data.adopt(data, cp.dataBlock);
    else this.data.reset();
    this.estimationSamples = cp.estimationSamples;
    // -1e15 in a checkpoint stands for "never" (JSON has no -Infinity)
    this.lastPlantUpdate = cp.lastPlantUpdate <= NEVER ? -Infinity : cp.lastPlantUpdate;
    this.lastSpMove = cp.lastSpMove <= NEVER ? -Infinity : cp.lastSpMove;
    // the residual screen resumes too; from an older checkpoint (or a malformed part) it starts afresh
    this.gate.restore(cp.robust);
    return null;
  }
}

/** A state from before the noise lags option gets the tracker's (its covariance sums restart: riv-covariance.ts). */
function withNoiseLags(s: InstrumentalArxState): InstrumentalArxState {
  if (!s || typeof s.options !== "object" || s.options === null || s.options.noiseLags !== undefined) return s;
  return { ...s, options: { ...s.options, noiseLags: s.options.na + prefilterNoiseLags(PREFILTER_POLE) } };
}

/** A deep copy; a misfit that is neither a finite number nor null (an older checkpoint) is left out. */
function copyLastGood(lg: LastGood): LastGood {
  const m = lg.misfit;
  const misfit = m === null || (typeof m === "number" && Number.isFinite(m)) ? { misfit: m } : {};
  return { model: { ...lg.model, a: [...lg.model.a], b: [...lg.model.b] }, cov: lg.cov.map((r) => [...r]), at: lg.at, ...misfit };
}

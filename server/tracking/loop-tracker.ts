/**
 * One loop's tracker (docs/architecture.md §4): telemetry in, a `LoopStateDto` out. The seams:
 * - conditioning (./conditioning.ts): scaling to % of span, block averaging to the estimation
 *   period Te, limit / flat-line / bad-run detectors, sample quality and the operating-point
 *   prefilter;
 * - plant choice (./plant-choice.ts): two closed-loop instrumental-variable estimators of the
 *   plant MV -> PV (lib/control/riv.ts: least squares is biased by PV noise in closed loop,
 *   docs/domain.md §3), the configured structure and one with a pole fewer, because an
 *   over-parameterised IV fit is ill-determined along its pole-zero cancellation and shows a
 *   spurious pole; an estimate no sampled plant can have is replaced by the last good one;
 * - state (./tracker-state.ts and `currentKind`): learning, tracking, low-excitation, poor-fit,
 *   saturated, manual, stale, each with its reason, so that alarms act only on a trusted model;
 * - figures (./figures.ts): closed-loop poles of the plant model under the loop's controller
 *   re-discretised at Te (the plant model exists only at Te; decay ratio, damping and wn are
 *   period-invariant), the data-only poles, and the assessment (lib/domain/assessment.ts);
 * - checkpoint (./checkpoint.ts): the estimator state across restarts.
 * Why learning is gated: the estimators learn only from informative samples (a set-point move, or
 * an operator's MV move in manual), so the estimate is held, not drifted by noise, while nothing
 * excites it; an isolated PV outlier is bounded by a residual test on the a-priori prediction
 * error (lib/control/robust.ts) and a sustained rise of that error makes the loop `poor-fit`.
 * A full state is computed at most once per second of telemetry time (and on state changes).
 */
import { ArxEstimator } from "@/lib/control/arx";
import { InstrumentalArxEstimator } from "@/lib/control/riv";
import { discretePid, gainHeadroom } from "@/lib/control/closed-loop";
import { ArxPredictor, ResidualScreen } from "@/lib/control/robust";
import { rimVerdict } from "@/lib/control/root-bounds";
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import { NON_TRACKING } from "@/lib/domain/alarms/conditions";
import { assessPoles, effectivePoles, effectivePolesSource, type RoutineFindings } from "@/lib/domain/assessment";
import { FigureTrend } from "@/lib/domain/trend";
import type { ArxModel, QTf } from "@/lib/control/types";
import type { TrendPoint } from "@/lib/control/forecast";
import type { LoopStateDto, SampleDto, TrackerState } from "@/lib/domain/types";
import type { Clock } from "../context";
import { checkpointProblem, NEVER, type EstimationInput, type PendingSample, type TrackerCheckpoint } from "./checkpoint";
import { dataPolesOf, fillModelFigures, finite, forecastRadiusOne, radiusPoint, rimDoubt } from "./figures";
import { largeError, predictBad, type OutlierJudge } from "./outliers";
import { choosePlant, plausibility } from "./plant-choice";
import { SignalConditioner } from "./conditioning";
import { emptyState, validateConfig, type EmptyStateInput } from "./tracker-state";
import type { LoopConfig } from "./types";

/** Largest order of the data-only closed-loop model. */
const MAX_DATA_ORDER = 8;
/** Smallest prefiltered instrument (% of span) that counts as information (a set-point move of 0.05 % decays below it in ~40 samples). */
const INSTRUMENT_THRESHOLD_PCT = 1e-3;
/** Seconds without an informative sample (set-point or manual move) before `low-excitation`, at least one estimator memory. */
const HOLD_S = 900;

export interface LoopTrackerOptions {
  clock: Clock;
  /** Length of the (t, radius) history for the crossing forecast, seconds; default the larger
   * of 3600 and 20 estimator memories. The history keeps at most one point per window/720. */
  forecastWindowS?: number;
  /**
   * The loop's low-priority decay-ratio level (the `rim-forecast` alarm's level), read at every
   * forecast; default the default policy's.
   */
  alarmDecayRatio?: (loopId: number) => number;
  /** Telemetry seconds between full state computations; default 1. */
  stateEveryS?: number;
  /** A PV repeated exactly for this many seconds of samples counts as flat-lined; default 30 (at least 20 samples). */
  flatSeconds?: number;
}

export class LoopTracker {
  config: LoopConfig;
  readonly decimation: number;
  readonly estimationPeriodS: number;
  readonly dataOrder: number;
  private readonly clock: Clock;
  private readonly forecastWindowS: number;
  private readonly forecastPointEveryS: number;
  private cachedForecast: LoopStateDto["forecast"] = null;
  private readonly decayTrend: FigureTrend;
  private readonly alarmDecayRatio: (loopId: number) => number;
  private cachedHeadroom: { value: number | null; at: number } = { value: null, at: -Infinity };
  private readonly stateEvery: number;
  /** Scaling, decimation, detectors, sample quality and the prefilter (./conditioning.ts). */
  private readonly cond: SignalConditioner;
  private controller: QTf;
  /** The plant model as reported: `plantFull` or `plantReduced`, whichever simulates the loop better. */
  private plant: InstrumentalArxEstimator;
  /** The configured structure (na, nb, nk). */
  private plantFull: InstrumentalArxEstimator;
  /** One pole fewer (na - 1, nb, nk) when na >= 2: an IV estimate of an over-parameterised model
   * is ill-determined along the pole-zero cancellation direction, so a first-order plant fitted
   * with na = 2 shows a spurious closed-loop pole anywhere, even outside the unit circle. */
  private plantReduced: InstrumentalArxEstimator | null;
  private data: ArxEstimator;
  /** The last plant model that passed the plausibility check, its covariance and when (estimation samples). */
  private lastGood: { model: ArxModel; cov: number[][]; at: number } | null = null;
  /** Why the current estimate is not physical (null when it is), from the last state computation. */
  private implausible: string | null = null;
  /** The live routine assessment's latest verdict (server/assessment), carried in every state. */
  private routine: RoutineFindings | undefined;
  /** Why the model's radius is not trusted although the estimate is physical (null when it is; see `judgeRim`). */
  private rimDoubt: string | null = null;
  /** Informative samples the plant estimate needs before it is reported. */
  private readonly minUpdates: number;
  /** Estimation samples without an informative one before the loop counts as `low-excitation`. */
  private readonly holdSamples: number;
  private readonly memory: number;
  private lastR: number | null = null;
  /** Estimation samples still to skip because their regressors hold a stood-in value. */
  private taint = 0;
  private screen = new ResidualScreen();
  private predictor: ArxPredictor;
  /** Informative plant samples when the current fit collapse began (-1: none). */
  private collapseInformative = -1;
  private pending: PendingSample | null = null;


  // counters (in estimation samples unless said otherwise)
  private estimationSamples = 0;
  private lastPlantUpdate = -Infinity;
  private lastSpMove = -Infinity;
  private lastStateAt = -Infinity;
  private samplesSeen = 0;
  private yMean = 0;
  private yVariance = 0;
  private radiusHistory: TrendPoint[] = [];
  private receivedAt: number | null = null;
  private deliveryPeriodMs = 0;
  private state: LoopStateDto;
  private stateReasonOverride: string | null = null;
  /** The source said it is gone (a Sparkplug NDEATH/DDEATH or its will): stale until it sends again. */
  private sourceGone: string | null = null;
  /** Samples skipped because their timestamp was not after the previous one. */
  outOfOrder = 0;

  constructor(config: LoopConfig, options: LoopTrackerOptions) {
    validateConfig(config);
    this.config = config;
    this.clock = options.clock;
    this.decimation = Math.max(1, Math.round(config.estimationPeriodS / config.telemetryPeriodS));
    this.estimationPeriodS = this.decimation * config.telemetryPeriodS;
    this.stateEvery = Math.max(1, Math.round((options.stateEveryS ?? 1) / this.estimationPeriodS));
    this.cond = new SignalConditioner(config, this.decimation, Math.max(20, Math.ceil((options.flatSeconds ?? 30) / config.telemetryPeriodS)));
    this.controller = this.makeController();
    const lambda = config.forgetting ?? 0.995;
    this.memory = 1 / (1 - lambda);
    this.forecastWindowS = options.forecastWindowS ?? Math.max(3600, 20 * this.memory * this.estimationPeriodS);
    this.forecastPointEveryS = Math.max(this.estimationPeriodS, this.forecastWindowS / 720);
    const memoryS = this.memory * this.estimationPeriodS;
    this.decayTrend = new FigureTrend({ memoryS, windowS: Math.max(7200, 20 * memoryS) });
    this.alarmDecayRatio = options.alarmDecayRatio ?? (() => DEFAULT_POLICY.decayRatio.low);
    // informative samples before the plant model is reported: about two set-point moves' worth on
    // a fast loop (a move of a few % gives 60-80; one move alone left closed-loop radii above 1 on
    // healthy demo loops), capped at 8 minutes of estimation samples on a slow one (a sample
    // every 10-40 s spans several moves by then), never fewer than 6 per parameter
    this.minUpdates = Math.max(6 * (config.na + config.nb), Math.min(100, Math.ceil(480 / this.estimationPeriodS)));
    this.holdSamples = Math.max(this.memory, Math.ceil(HOLD_S / this.estimationPeriodS));
    this.plantFull = this.makePlantEstimator(config.na);
    this.plantReduced = config.na >= 2 ? this.makePlantEstimator(config.na - 1) : null;
    this.plant = this.plantFull;
    const degree = Math.max(config.na + this.controller.den.length - 1, config.nk + config.nb - 1 + this.controller.num.length - 1);
    this.dataOrder = Math.min(MAX_DATA_ORDER, Math.max(2, degree));
    this.data = this.makeDataEstimator();
    this.predictor = new ArxPredictor(config.na, config.nk + config.nb);
    this.state = emptyState(this.stateInput(), "learning", "waiting for telemetry");
  }

  private makeController(): QTf {
    const c = this.config.controller;
    return discretePid({
      kp: c.kp,
      ti: c.ti ?? undefined,
      td: c.td,
      tf: c.tf > 0 ? c.tf : undefined,
      T: this.estimationPeriodS,
      action: c.action,
      form: c.form,
    });
  }

  private makePlantEstimator(na: number): InstrumentalArxEstimator {
    const c = this.config;
    return new InstrumentalArxEstimator({ na, nb: c.nb, nk: c.nk, forgetting: c.forgetting ?? 0.995, T: this.estimationPeriodS, instrumentThreshold: INSTRUMENT_THRESHOLD_PCT, controller: this.controller });
  }

  private makeDataEstimator(): ArxEstimator {
    return new ArxEstimator({
      na: this.dataOrder,
      nb: this.dataOrder,
      nk: 1,
      forgetting: this.config.forgetting ?? 0.995,
      T: this.estimationPeriodS,
      gating: "none",
      operatingPoint: "none",
    });
  }

  /** Replace the configuration. Same estimation structure: the estimators are kept (a new
   * tuning only changes the model-based poles, the plant model does not depend on it). */
  reconfigure(config: LoopConfig): "kept" | "relearn" {
    validateConfig(config);
    const old = this.config;
    const sameStructure =
      old.na === config.na &&
      old.nb === config.nb &&
      old.nk === config.nk &&
      old.telemetryPeriodS === config.telemetryPeriodS &&
      Math.max(1, Math.round(config.estimationPeriodS / config.telemetryPeriodS)) === this.decimation &&
      (old.forgetting ?? 0.995) === (config.forgetting ?? 0.995) &&
      old.pvLo === config.pvLo &&
      old.pvHi === config.pvHi &&
      old.mvLo === config.mvLo &&
      old.mvHi === config.mvHi;
    if (!sameStructure) return "relearn";
    this.config = config;
    this.cond.config = config;
    this.controller = this.makeController();
    this.cachedHeadroom = { value: null, at: -Infinity };
    return "kept";
  }

  /** The latest state (no computation). */
  get current(): LoopStateDto {
    return this.state;
  }

  /** Attach the live routine assessment's verdict (server/assessment) to this and every later state. */
  attachRoutine(routine: RoutineFindings): LoopStateDto {
    this.routine = routine;
    this.state = { ...this.state, routine };
    return this.state;
  }

  /**
   * Take a batch of validated samples (oldest first) received at `receivedAt` (epoch ms).
   * Returns the new state when one was computed, else null. Never throws on finite input;
   * non-finite or out-of-order samples are skipped and counted.
   */
  push(samples: readonly SampleDto[], receivedAt: number): LoopStateDto | null {
    let computed = false;
    const prevKind = this.state.trackerState;
    if (Number.isFinite(receivedAt) && samples.length > 0) {
      this.receivedAt = receivedAt;
      this.sourceGone = null;
      // a gateway that sends n samples per message delivers every n periods: "3 periods of
      // silence" is counted in delivery periods, never shorter than 3 telemetry periods
      this.deliveryPeriodMs = Math.max(1, samples.length) * this.config.telemetryPeriodS * 1000;
    }
    for (const s of samples) {
      if (!Number.isFinite(s.t) || !Number.isFinite(s.pv) || !Number.isFinite(s.sp) || !Number.isFinite(s.mv)) {
        this.outOfOrder++;
        continue;
      }
      if (this.cond.lastSample && s.t <= this.cond.lastSample.t) {
        this.outOfOrder++;
        continue;
      }
      this.samplesSeen++;
      const block = this.cond.ingest(s);
      if (block && this.estimate(block.u, block.y, block.r, block.manual, block.saturated, block.flat, block.t, block.bad, block.whole)) computed = true;
    }
    const kind = this.currentKind(this.clock.now());
    if (!computed && kind.state !== prevKind && this.samplesSeen > 0) {
      this.refreshStateOnly(kind);
      return this.state;
    }
    return computed ? this.state : null;
  }


  /**
   * One estimation sample. An isolated PV outlier (robust residual test, lib/control/robust.ts)
   * is told from a real change of the process by the next sample: a sample whose prediction error
   * is beyond the threshold waits one estimation period; if the next one fits again under the
   * hypothesis that it was an outlier, it enters bounded (the plant model's prediction plus a
   * bounded error, in the prefilter state too), else as it is (a load step, a valve slip or a plant
   * change is data). Bounding every large error instead cut into real responses and biased the
   * estimate (measured on the demo loops: sticking valve, saturation).
   */
  private estimate(u: number, y: number, r: number, manual: boolean, saturated: boolean, flat: boolean, t: number, bad = false, whole = false): boolean {
    const sample: EstimationInput = { u, y, r, manual, saturated, flat, t, bad, whole };
    const held = this.pending;
    if (held) {
      this.pending = null;
      // a bad sample next cannot confirm anything: the bounded value is the safer one
      const isolated = bad || !this.largeError(sample, held);
      const first = this.step(isolated ? { ...held.sample, y: held.yBounded, rawE: held.rawE } : held.sample, isolated);
      return this.step(this.predictBad(sample), false) || first;
    }
    if (bad) return this.step(this.predictBad(sample), false);
    const judged = this.largeError(sample, null);
    if (judged) {
      this.pending = { sample, yBounded: judged.yBounded, rawE: judged.rawE };
      return false;
    }
    return this.step(sample, false);
  }

  /** What the outlier checks (./outliers.ts) judge with, or null when no trusted model may judge. */
  private outlierJudge(): OutlierJudge | null {
    const prev = this.cond.prevSignals;
    if (!prev || this.taint > 0 || !this.screen.ready() || !this.trusted()) return null;
    return { plant: this.plant, predictor: this.predictor, screen: this.screen, prev, filtered: this.cond.filtered };
  }

  private predictBad(x: EstimationInput): EstimationInput {
    return predictBad(x, this.outlierJudge());
  }

  private largeError(x: EstimationInput, after: PendingSample | null): { yBounded: number; rawE: number } | null {
    return largeError(x, after, this.outlierJudge());
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
    const tainted = bad || this.taint > 0;
    if (bad) this.taint = this.config.na + this.config.nb + this.config.nk;
    else if (this.taint > 0) this.taint--;
    const learn = !saturated && !flat && !tainted;
    const p = this.plant;
    const pred = this.predictor.predict(p.theta, p.na, p.nb, p.nk);
    // operating point removed by a leaky differencer (see the module comment)
    const f = this.cond.prefilter(u, y, r);
    if (!f) return false;
    if (outlier) this.cond.quality.markOutlier();
    if (!tainted) this.watchFit(x.rawE ?? f.y - pred);
    this.predictor.shift(f.y, f.u);
    // running variance of the filtered PV (the signal the model predicts), for the fit figure
    if (!tainted) {
      const w = 1 / Math.min(k + 1, this.memory);
      const d = f.y - this.yMean;
      this.yMean += w * d;
      this.yVariance = (1 - w) * (this.yVariance + w * d * d);
    }
    try {
      const mode = !learn ? "skip" : manual ? "open" : "closed";
      if (this.plantFull.push(f.u, f.y, f.r, mode)) this.lastPlantUpdate = k;
      this.plantReduced?.push(f.u, f.y, f.r, mode);
      this.data.push(f.r, f.y, learn && !manual);
    } catch {
      this.resetEstimators("estimators restarted after a numerical failure");
    }
    if (!this.parametersFinite()) this.resetEstimators("estimators restarted after a numerical overflow");
    if (k - this.lastStateAt < this.stateEvery) return false;
    this.lastStateAt = k;
    this.computeState(t);
    return true;
  }

  /**
   * The residual screen's scale and the fit-collapse watch, fed with the model's a-priori
   * prediction error from the first trusted estimate on (before it, an early estimate would read
   * its own learning as a collapse).
   */
  private watchFit(e: number): void {
    const p = this.plant;
    // once a trusted model set the baseline, the current estimate stays under watch: an estimate
    // that turns implausible because the data no longer fit any such model is a collapse too
    if (Number.isFinite(e) && (this.trusted() || this.screen.baselineScale() > 0)) this.screen.record(e);
    if (!this.fitCollapsed()) this.collapseInformative = -1;
    else if (this.collapseInformative < 0) this.collapseInformative = p.informative;
    else if (p.informative - this.collapseInformative >= this.memory) {
      // refitted on a full memory of new set-point responses and still this far off: the new normal
      this.screen.rebase();
      this.collapseInformative = -1;
    }
  }

  private fitCollapsed(): boolean {
    return this.screen.collapsed;
  }

  /** The plant estimate can be reported: enough informative samples and a well-posed solution. */
  private plantReady(p: InstrumentalArxEstimator = this.plant): boolean {
    return p.solved && p.informative >= this.minUpdates && p.conditioning > 1e-9;
  }

  private parametersFinite(): boolean {
    const a = this.plantFull.theta;
    const a2 = this.plantReduced?.theta ?? a;
    for (let i = 0; i < a2.length; i++) if (!Number.isFinite(a2[i]!)) return false;
    const b = this.data.rls.theta;
    for (let i = 0; i < a.length; i++) if (!Number.isFinite(a[i]!)) return false;
    for (let i = 0; i < b.length; i++) if (!Number.isFinite(b[i]!)) return false;
    return true;
  }

  private resetEstimators(reason: string): void {
    this.plantFull = this.makePlantEstimator(this.config.na);
    this.plantReduced = this.config.na >= 2 ? this.makePlantEstimator(this.config.na - 1) : null;
    this.plant = this.plantFull;
    this.lastGood = null;
    this.implausible = null;
    this.rimDoubt = null;
    this.data = this.makeDataEstimator();
    this.screen = new ResidualScreen();
    this.collapseInformative = -1;
    this.pending = null;
    this.lastPlantUpdate = -Infinity;
    this.cachedHeadroom = { value: null, at: -Infinity };
    this.stateReasonOverride = reason;
  }

  /** The tracker state and its reason at time `now` (epoch ms), from the detectors and counters. */
  private currentKind(now: number): { state: TrackerState; reason: string | null } {
    if (this.sourceGone !== null) return { state: "stale", reason: this.sourceGone };
    if (this.receivedAt === null) return { state: "learning", reason: "waiting for telemetry" };
    const signal = this.cond.signalKind(now, this.receivedAt, this.deliveryPeriodMs);
    if (signal) return signal;
    if (this.stateReasonOverride && !this.plantReady()) return { state: "learning", reason: this.stateReasonOverride };
    if (!this.plantReady()) {
      const n = this.plant.informative;
      if (n >= this.minUpdates) return { state: "learning", reason: `plant model learning: the set-point moves so far do not determine all ${this.plant.d} parameters` };
      const age = Number.isFinite(this.lastSpMove) ? ` (last set-point move ${Math.round((this.estimationSamples - this.lastSpMove) * this.estimationPeriodS)} s ago)` : " (no set-point move seen yet)";
      return { state: "learning", reason: `plant model learning: ${n} of ${this.minUpdates} informative samples${age}` };
    }
    if (this.fitCollapsed()) {
      const ratio = this.screen.collapseRatio;
      const what = `prediction error ${Number.isFinite(ratio) ? ratio.toFixed(1) : "several"} x its usual level`;
      return { state: "poor-fit", reason: `the plant model no longer fits the PV (${what}): figures not trusted until it fits again` };
    }
    if (this.rimDoubt !== null) return { state: "poor-fit", reason: this.rimDoubt };
    if (this.implausible !== null) {
      if (!this.lastGood) return { state: "learning", reason: `plant model learning: the estimate so far is not physical (${this.implausible})` };
      const age = Math.round((this.estimationSamples - this.lastGood.at) * this.estimationPeriodS);
      return { state: "low-excitation", reason: `the current estimate is not physical (${this.implausible}): plant model from ${age} s ago held` };
    }
    const idle = this.estimationSamples - this.lastPlantUpdate;
    if (idle > this.holdSamples) {
      return {
        state: "low-excitation",
        reason: `no set-point or manual move for ${Math.round(idle * this.estimationPeriodS)} s: plant model held (last updated ${Math.round(idle * this.estimationPeriodS)} s ago)`,
      };
    }
    return { state: "tracking", reason: null };
  }

  /** The source announced it is gone: `stale` at once with `reason`, until its next samples. */
  markSourceGone(reason: string): LoopStateDto | null {
    this.sourceGone = reason;
    if (this.receivedAt === null) return null;
    this.refreshStateOnly({ state: "stale", reason });
    return this.state;
  }

  /**
   * Staleness check for the registry's timer: returns the new state when the tracker state
   * changed at `now` (e.g. to `stale` after 3 silent periods), else null.
   */
  checkStale(now: number): LoopStateDto | null {
    if (this.receivedAt === null) return null;
    const kind = this.currentKind(now);
    if (kind.state === this.state.trackerState && kind.reason === this.state.stateReason) return null;
    if (kind.state !== "stale" && this.state.trackerState !== "stale") return null;
    this.refreshStateOnly(kind);
    return this.state;
  }

  private stateInput(): EmptyStateInput {
    return { config: this.config, now: this.clock.now(), receivedAt: this.receivedAt, estimationPeriodS: this.estimationPeriodS, samples: this.samplesSeen, last: this.cond.lastSample, quality: this.cond.quality.dto(), routine: this.routine };
  }

  private refreshStateOnly(kind: { state: TrackerState; reason: string | null }): void {
    this.state = { ...this.state, at: this.clock.now(), receivedAt: this.receivedAt, trackerState: kind.state, stateReason: kind.reason, samples: this.samplesSeen, last: this.cond.lastSample, sampleQuality: this.cond.quality.dto() };
  }

  private computeState(sampleT: number): void {
    this.plant = choosePlant(this.plantFull, this.plantReduced, (p) => this.plantReady(p), this.config.controller.action);
    this.implausible = this.plantReady() ? plausibility(this.plant, this.config.controller.action) : null;
    if (this.plantReady() && this.implausible === null) {
      // the current estimate, kept as the last good one (the same objects feed the figures below)
      this.lastGood = { model: this.plant.model(), cov: this.plant.parameterCovariance(), at: this.estimationSamples };
    }
    const now = this.clock.now();
    let kind = this.currentKind(now);
    const st = emptyState(this.stateInput(), kind.state, kind.reason);
    st.at = now;
    st.excitation = this.plant.solved ? finite(this.plant.conditioning) : null;
    const s2 = this.plant.residualVariance();
    if (Number.isFinite(s2) && this.yVariance > 0) st.fitPercent = finite(Math.max(-100, Math.min(100, 100 * (1 - Math.sqrt(s2 / this.yVariance)))));
    // data-only poles
    const memorySamples = this.memory;
    st.dataPolesKind = this.estimationSamples - this.lastSpMove <= memorySamples ? "closed-loop" : "disturbance-response";
    if (this.data.updates >= Math.max(50, 10 * this.dataOrder)) st.dataPoles = dataPolesOf(this.data);
    if (this.plantReady()) {
      if (this.lastGood) fillModelFigures(st, this.lastGood.model, this.lastGood.cov, this.controller, () => this.headroom(this.lastGood!.model));
    }
    const poles = effectivePoles(st);
    // the figures come from the model-based poles only: data-only poles alone (while the plant is
    // learnt) do not make a radius; they still decide "undecided near the rim" and the map
    st.polesFrom = st.modelPoles.length > 0 ? effectivePolesSource(st) : null;
    Object.assign(st, assessPoles(st.modelPoles, this.estimationPeriodS));
    // a root whose conditioning bound straddles |z| = 1: no Jury verdict either way ("undecided near the rim")
    st.rimUndecided = rimVerdict(poles) === "undecided";
    this.rimDoubt = rimDoubt(st);
    if (this.rimDoubt !== null) {
      st.rimUndecided = true;
      kind = this.currentKind(now);
      st.trackerState = kind.state;
      st.stateReason = kind.reason;
    }
    if (st.rimUndecided) st.juryStable = null;
    const t = sampleT / 1000;
    // the decay-ratio trend only while the alarms may act on the estimate (they reset it otherwise)
    if (NON_TRACKING.has(kind.state)) this.decayTrend.reset();
    else this.decayTrend.push(t, st.decayRatio);
    if (st.spectralRadius !== null && (kind.state === "tracking" || kind.state === "low-excitation")) {
      const last = this.radiusHistory[this.radiusHistory.length - 1];
      if (!last || t >= last.t + this.forecastPointEveryS) {
        this.radiusHistory.push(radiusPoint(t, st.spectralRadius, st.radiusSd));
        const cutoff = t - this.forecastWindowS;
        let drop = 0;
        while (drop < this.radiusHistory.length && this.radiusHistory[drop]!.t < cutoff) drop++;
        if (drop > 0) this.radiusHistory.splice(0, drop);
        this.cachedForecast = { alarmLevel: null, radiusOne: forecastRadiusOne(this.radiusHistory, this.memory * this.estimationPeriodS) };
      }
      st.forecast = this.cachedForecast;
    } else {
      this.cachedForecast = null;
    }
    const level = this.alarmDecayRatio(this.config.id);
    const toLevel = NON_TRACKING.has(kind.state) ? null : this.decayTrend.crossing(level, t);
    if (toLevel || st.forecast) {
      const alarmLevel = toLevel ? { at: Math.round(toLevel.at * 1000), low: Math.round(toLevel.low * 1000), high: Math.round(toLevel.high * 1000), decayRatio: level } : null;
      st.forecast = { radiusOne: st.forecast?.radiusOne ?? null, alarmLevel };
      if (!st.forecast.radiusOne && !alarmLevel) st.forecast = null;
    }
    this.state = st;
  }

  /** Gain headroom of the reported model; the search costs as much as the rest of a state together, so it is refreshed every 5 states. */
  private headroom(model: ArxModel): number | null {
    if (this.estimationSamples - this.cachedHeadroom.at >= 5 * this.stateEvery) {
      this.cachedHeadroom = { value: finite(gainHeadroom(model, this.controller)), at: this.estimationSamples };
    }
    return this.cachedHeadroom.value;
  }

  /** Plant model (for diagnostics and tests). */
  plantModel(): ReturnType<InstrumentalArxEstimator["model"]> {
    return this.plant.model();
  }

  /** Informative samples the plant estimator has taken so far. */
  get plantUpdates(): number {
    return this.plant.informative;
  }

  /** Serialisable estimator state for checkpoints (JSON-safe). */
  checkpoint(): TrackerCheckpoint {
    return {
      version: 2,
      loopId: this.config.id,
      structure: { na: this.config.na, nb: this.config.nb, nk: this.config.nk, estimationPeriodS: this.estimationPeriodS, dataOrder: this.dataOrder },
      plant: this.plantFull.toJSON(),
      plantReduced: this.plantReduced ? this.plantReduced.toJSON() : null,
      lastGood: this.lastGood ? { model: { ...this.lastGood.model, a: [...this.lastGood.model.a], b: [...this.lastGood.model.b] }, cov: this.lastGood.cov.map((r) => [...r]), at: this.lastGood.at } : null,
      data: this.data.toJSON(),
      estimationSamples: this.estimationSamples,
      lastPlantUpdate: Number.isFinite(this.lastPlantUpdate) ? this.lastPlantUpdate : NEVER,
      lastSpMove: Number.isFinite(this.lastSpMove) ? this.lastSpMove : NEVER,
      samplesSeen: this.samplesSeen,
      radiusHistory: this.radiusHistory.map((p) => ({ ...p })),
      yVariance: this.yVariance,
      yMean: this.yMean,
      prefilter: { prev: this.cond.prevSignals ? { ...this.cond.prevSignals } : null, filtered: { ...this.cond.filtered } },
      robust: { screen: this.screen.toJSON(), predictor: this.predictor.toJSON(), taint: this.taint, collapseInformative: this.collapseInformative, pending: this.pending ? { sample: { ...this.pending.sample }, yBounded: this.pending.yBounded, rawE: this.pending.rawE } : null },
    };
  }

  /**
   * Resume from a checkpoint. Refused (returns a reason, state untouched) when it belongs to
   * another loop or another estimation structure, or is malformed.
   */
  restore(cp: TrackerCheckpoint): { ok: true } | { ok: false; reason: string } {
    try {
      if (!cp || cp.version !== 2) return { ok: false, reason: "unknown checkpoint version (made before the instrumental-variable plant estimator)" };
      if (cp.loopId !== this.config.id) return { ok: false, reason: `checkpoint of loop ${cp.loopId}, not ${this.config.id}` };
      const bad = checkpointProblem(cp, { na: this.config.na, nb: this.config.nb, nk: this.config.nk, estimationPeriodS: this.estimationPeriodS, dataOrder: this.dataOrder });
      if (bad !== null) return { ok: false, reason: bad };
      const plant = InstrumentalArxEstimator.fromJSON(cp.plant);
      const reduced = cp.plantReduced ? InstrumentalArxEstimator.fromJSON(cp.plantReduced) : null;
      if (plant.na !== this.config.na || (reduced === null) !== (this.config.na < 2) || (reduced !== null && reduced.na !== this.config.na - 1)) {
        return { ok: false, reason: "checkpoint was made for another model structure or estimation period" };
      }
      const data = ArxEstimator.fromJSON(cp.data);
      const pf = cp.prefilter;
      const lg = cp.lastGood;
      this.lastGood = lg ? { model: { ...lg.model, a: [...lg.model.a], b: [...lg.model.b] }, cov: lg.cov.map((r) => [...r]), at: lg.at } : null;
      this.plantFull = plant;
      this.plantReduced = reduced;
      this.plant = choosePlant(this.plantFull, this.plantReduced, (p) => this.plantReady(p), this.config.controller.action);
      this.rimDoubt = null;
      this.data = data;
      this.cond.prevSignals = pf.prev ? { ...pf.prev } : null;
      this.cond.filtered = { ...pf.filtered };
      this.estimationSamples = cp.estimationSamples;
      // -1e15 in a checkpoint stands for "never" (JSON has no -Infinity)
      this.lastPlantUpdate = cp.lastPlantUpdate <= NEVER ? -Infinity : cp.lastPlantUpdate;
      this.lastSpMove = cp.lastSpMove <= NEVER ? -Infinity : cp.lastSpMove;
      this.samplesSeen = cp.samplesSeen;
      this.radiusHistory = cp.radiusHistory.map((p) => radiusPoint(p.t, p.value, p.sd ?? null));
      this.yVariance = cp.yVariance;
      this.yMean = cp.yMean;
      this.lastStateAt = -Infinity;
      this.cachedHeadroom = { value: null, at: -Infinity };
      this.cachedForecast = null;
      // the residual screen resumes too; from an older checkpoint (or a malformed part) it starts afresh
      const rb = cp.robust;
      const screen = new ResidualScreen();
      const predictor = new ArxPredictor(this.config.na, this.config.nk + this.config.nb);
      const robustOk = !!rb && screen.restore(rb.screen) && predictor.restore(rb.predictor) && Number.isInteger(rb.taint) && Number.isFinite(rb.collapseInformative);
      this.screen = robustOk ? screen : new ResidualScreen();
      this.predictor = robustOk ? predictor : new ArxPredictor(this.config.na, this.config.nk + this.config.nb);
      this.taint = robustOk && rb ? Math.max(0, rb.taint) : 0;
      this.collapseInformative = robustOk && rb ? rb.collapseInformative : -1;
      const pend = robustOk && rb ? rb.pending : null;
      const pendOk = !!pend && [pend.yBounded, pend.rawE, pend.sample?.u, pend.sample?.y, pend.sample?.r, pend.sample?.t].every((v) => typeof v === "number" && Number.isFinite(v));
      this.pending = pendOk && pend ? { sample: { ...pend.sample }, yBounded: pend.yBounded, rawE: pend.rawE } : null;
      return { ok: true };
    } catch (e) {
      return { ok: false, reason: `checkpoint rejected: ${(e as Error).message}` };
    }
  }
}


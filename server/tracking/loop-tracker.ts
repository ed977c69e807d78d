/**
 * One loop's tracker (docs/architecture.md §4): telemetry in, a `LoopStateDto` out. The seams:
 * - conditioning (./conditioning.ts): scaling to % of span, block averaging to the estimation
 *   period Te, limit / flat-line / bad-run detectors, sample quality and the operating-point
 *   prefilter;
 * - estimation (./estimation.ts): the sample gate (./sample-gate.ts: outliers, taint, fit watch),
 *   the plant estimators and the plant choice (./plant-choice.ts): two closed-loop
 *   instrumental-variable estimators of the plant MV -> PV (lib/control/riv.ts: least squares is
 *   biased by PV noise in closed loop, docs/domain.md §3), the configured structure and one with a
 *   pole fewer, because an over-parameterised IV fit is ill-determined along its pole-zero
 *   cancellation and shows a spurious pole; an estimate no sampled plant can have is replaced by
 *   the last good one; and the data-only closed-loop model (./data-model.ts);
 * - state (./tracker-state.ts and `currentKind`): learning, tracking, low-excitation, poor-fit,
 *   saturated, manual, stale, each with its reason, so that alarms act only on a trusted model;
 * - figures (./figures.ts): closed-loop poles of the plant model under the loop's controller
 *   re-discretised at Te (the plant model exists only at Te; decay ratio, damping and wn are
 *   period-invariant), and the assessment (lib/domain/assessment.ts); their histories and
 *   forecasts (./trends.ts);
 * - checkpoint (./checkpoint.ts): the estimator state across restarts; the drift's (./drift-checkpoint.ts).
 * A full state is computed at most once per second of telemetry time (and on state changes).
 */
import { InstrumentalArxEstimator } from "@/lib/control/riv";
import { gainHeadroom } from "@/lib/control/closed-loop";
import { rimVerdict } from "@/lib/control/root-bounds";
import { DEFAULT_POLICY } from "@/lib/domain/alarms/policy";
import { discretePidOf } from "@/lib/control/closed-loop";
import { assessPoles, effectivePoles, effectivePolesSource, type RoutineFindings } from "@/lib/domain/assessment";
import type { ArxModel, QTf } from "@/lib/control/types";
import type { LoopStateDto, SampleDto, TrackerState } from "@/lib/domain/types";
import type { Clock } from "../context";
import { checkpointProblem, type TrackerCheckpoint } from "./checkpoint";
import type { RecordedDrift } from "./drift-checkpoint";
import { PlantEstimation } from "./estimation";
import { fillModelFigures, finite, radiusPoint, rimDoubt } from "./figures";
import { FigureTrends } from "./trends";
import { DEFAULT_DRIFT_NOISE, type DriftNoiseOption } from "./drift-source";
import { SignalConditioner } from "./conditioning";
import { emptyState, validateConfig, type EmptyStateInput } from "./tracker-state";
import type { LoopConfig } from "./types";

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
  /** Rim forecast from the plant parameters' drift (./drift-source.ts), the radius history's trend where that has none; false: the trend alone. Default true. */
  parameterDrift?: boolean;
  /** The parameter drift's estimated noise model (./drift-source.ts); default DEFAULT_DRIFT_NOISE, NO_DRIFT_NOISE for none. */
  driftNoise?: DriftNoiseOption;
  /** Telemetry seconds between full state computations; default 1. */
  stateEveryS?: number;
  /** A PV repeated exactly for this many seconds of samples counts as flat-lined; default 30 (at least 20 samples). */
  flatSeconds?: number;
}

export class LoopTracker {
  config: LoopConfig;
  readonly decimation: number;
  readonly estimationPeriodS: number;
  private readonly clock: Clock;
  /** The radius and decay-ratio histories and their forecasts (./trends.ts). */
  private readonly trends: FigureTrends;
  private readonly alarmDecayRatio: (loopId: number) => number;
  private cachedHeadroom: { value: number | null; at: number } = { value: null, at: -Infinity };
  private readonly stateEvery: number;
  /** Scaling, decimation, detectors, sample quality and the prefilter (./conditioning.ts). */
  private readonly cond: SignalConditioner;
  private controller: QTf;
  /** The estimators, the sample gate and the plant choice (./estimation.ts). */
  private readonly est: PlantEstimation;
  /** The live routine assessment's latest verdict (server/assessment), carried in every state. */
  private routine: RoutineFindings | undefined;
  /** Why the model's radius is not trusted although the estimate is physical (null when it is; see `judgeRim`). */
  private rimDoubt: string | null = null;
  /** Estimation samples without an informative one before the loop counts as `low-excitation`. */
  private readonly holdSamples: number;
  private readonly memory: number;

  // counters (in estimation samples unless said otherwise)
  private lastStateAt = -Infinity;
  private samplesSeen = 0;
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
    const forecastWindowS = options.forecastWindowS ?? Math.max(3600, 20 * this.memory * this.estimationPeriodS);
    this.trends = new FigureTrends({ memory: this.memory, estimationPeriodS: this.estimationPeriodS, forecastWindowS, drift: () => this.est.driftForecast(this.controller) });
    this.alarmDecayRatio = options.alarmDecayRatio ?? (() => DEFAULT_POLICY.decayRatio.low);
    this.holdSamples = Math.max(this.memory, Math.ceil(HOLD_S / this.estimationPeriodS));
    this.est = this.makeEstimation(options.parameterDrift ?? true, options.driftNoise ?? DEFAULT_DRIFT_NOISE);
    this.state = emptyState(this.stateInput(), "learning", "waiting for telemetry");
  }

  private makeController(): QTf {
    return discretePidOf(this.config.controller, this.estimationPeriodS);
  }

  private makeEstimation(drift: boolean, noise?: DriftNoiseOption): PlantEstimation {
    const hooks = { stateDue: (k: number, t: number) => this.stateDue(k, t), restarted: (reason: string) => this.restarted(reason) };
    return new PlantEstimation(this.config, this.estimationPeriodS, this.controller, this.memory, this.cond, hooks, drift ? { windowS: this.trends.forecastWindowS, ...(noise ? { noise } : {}) } : null);
  }

  /** Order of the data-only closed-loop model. */
  get dataOrder(): number {
    return this.est.data.order;
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


  private estimate(u: number, y: number, r: number, manual: boolean, saturated: boolean, flat: boolean, t: number, bad = false, whole = false): boolean {
    return this.est.estimate({ u, y, r, manual, saturated, flat, t, bad, whole });
  }

  /**
   * A historian backfill replays samples through this tracker before it goes live: while
   * `replaying`, states carry no forecast (none is published); at the end the forecast of the
   * state going live is fitted from the same histories live telemetry would have kept.
   */
  setReplaying(replaying: boolean): void {
    if (this.trends.deferred === replaying) return;
    this.trends.deferred = replaying;
    if (!replaying) {
      this.state = { ...this.state };
      this.trends.settle(this.state);
    }
  }

  /** After estimation sample k (time t, epoch ms): a full state when one is due. */
  private stateDue(k: number, t: number): boolean {
    if (k - this.lastStateAt < this.stateEvery) return false;
    this.lastStateAt = k;
    this.computeState(t);
    return true;
  }

  private restarted(reason: string): void {
    this.rimDoubt = null;
    this.cachedHeadroom = { value: null, at: -Infinity };
    this.stateReasonOverride = reason;
  }

  /** The tracker state and its reason at time `now` (epoch ms), from the detectors and counters. */
  private currentKind(now: number): { state: TrackerState; reason: string | null } {
    if (this.sourceGone !== null) return { state: "stale", reason: this.sourceGone };
    if (this.receivedAt === null) return { state: "learning", reason: "waiting for telemetry" };
    const signal = this.cond.signalKind(now, this.receivedAt, this.deliveryPeriodMs);
    if (signal) return signal;
    if (this.stateReasonOverride && !this.est.plantReady()) return { state: "learning", reason: this.stateReasonOverride };
    if (!this.est.plantReady()) {
      const n = this.est.plant.informative;
      if (n >= this.est.minUpdates) return { state: "learning", reason: `plant model learning: the set-point moves so far do not determine all ${this.est.plant.d} parameters` };
      const age = Number.isFinite(this.est.lastSpMove) ? ` (last set-point move ${Math.round((this.est.estimationSamples - this.est.lastSpMove) * this.estimationPeriodS)} s ago)` : " (no set-point move seen yet)";
      return { state: "learning", reason: `plant model learning: ${n} of ${this.est.minUpdates} informative samples${age}` };
    }
    if (this.est.fitCollapsed()) {
      const ratio = this.est.gate.screen.collapseRatio;
      const what = `prediction error ${Number.isFinite(ratio) ? ratio.toFixed(1) : "several"} x its usual level`;
      return { state: "poor-fit", reason: `the plant model no longer fits the PV (${what}): figures not trusted until it fits again` };
    }
    if (this.rimDoubt !== null) return { state: "poor-fit", reason: this.rimDoubt };
    if (this.est.implausible !== null) {
      if (!this.est.lastGood) return { state: "learning", reason: `plant model learning: the estimate so far is not physical (${this.est.implausible})` };
      const age = Math.round((this.est.estimationSamples - this.est.lastGood.at) * this.estimationPeriodS);
      return { state: "low-excitation", reason: `the current estimate is not physical (${this.est.implausible}): plant model from ${age} s ago held` };
    }
    const idle = this.est.estimationSamples - this.est.lastPlantUpdate;
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
    this.est.choose(this.config.controller.action);
    const now = this.clock.now();
    let kind = this.currentKind(now);
    const st = emptyState(this.stateInput(), kind.state, kind.reason);
    st.at = now;
    st.excitation = this.est.plant.solved ? finite(this.est.plant.conditioning) : null;
    const s2 = this.est.plant.residualVariance();
    // one-step prediction against PV's own mean over the same samples and weights (InstrumentalArxEstimator.outputVariance)
    const v = this.est.plant.outputVariance();
    if (Number.isFinite(s2) && v > 0) st.fitPercent = finite(Math.max(-100, Math.min(100, 100 * (1 - Math.sqrt(s2 / v)))));
    // data-only poles
    const memorySamples = this.memory;
    st.dataPolesKind = this.est.estimationSamples - this.est.lastSpMove <= memorySamples ? "closed-loop" : "disturbance-response";
    if (this.est.data.ready) st.dataPoles = this.est.data.poles();
    if (this.est.plantReady()) {
      const lg = this.est.lastGood;
      if (lg) fillModelFigures(st, lg.model, lg.cov, this.controller, () => this.headroom(lg.model), lg.misfit);
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
    this.trends.update(st, kind, sampleT, this.alarmDecayRatio(this.config.id));
    this.state = st;
  }

  /** Gain headroom of the reported model; the search costs as much as the rest of a state together, so it is refreshed every 5 states. */
  private headroom(model: ArxModel): number | null {
    if (this.est.estimationSamples - this.cachedHeadroom.at >= 5 * this.stateEvery) {
      this.cachedHeadroom = { value: finite(gainHeadroom(model, this.controller)), at: this.est.estimationSamples };
    }
    return this.cachedHeadroom.value;
  }

  /** Plant model (for diagnostics and tests). */
  plantModel(): ReturnType<InstrumentalArxEstimator["model"]> {
    return this.est.plant.model();
  }

  /** Informative samples the plant estimator has taken so far. */
  get plantUpdates(): number {
    return this.est.plant.informative;
  }

  /** Serialisable estimator state for checkpoints (JSON-safe). */
  checkpoint(): TrackerCheckpoint {
    return {
      version: 2,
      loopId: this.config.id,
      structure: { na: this.config.na, nb: this.config.nb, nk: this.config.nk, estimationPeriodS: this.estimationPeriodS, dataOrder: this.dataOrder, dataDecimation: this.est.data.decimation },
      ...this.est.toJSON(),
      samplesSeen: this.samplesSeen,
      radiusHistory: this.trends.radiusHistory.map((p) => ({ ...p })),
      prefilter: { prev: this.cond.prevSignals ? { ...this.cond.prevSignals } : null, filtered: { ...this.cond.filtered } },
    };
  }

  /** The rim forecast's drift and its part of a checkpoint (./drift-checkpoint.ts), null without one: taken right after `checkpoint()`, restored right after `restore`. */
  get drift(): RecordedDrift | null {
    return this.est.drift;
  }

  /**
   * Resume from a checkpoint. Refused (returns a reason, state untouched) when it belongs to
   * another loop or another estimation structure, or is malformed.
   */
  restore(cp: TrackerCheckpoint): { ok: true } | { ok: false; reason: string } {
    try {
      if (!cp || cp.version !== 2) return { ok: false, reason: "unknown checkpoint version (made before the instrumental-variable plant estimator)" };
      if (cp.loopId !== this.config.id) return { ok: false, reason: `checkpoint of loop ${cp.loopId}, not ${this.config.id}` };
      const bad = checkpointProblem(cp, { na: this.config.na, nb: this.config.nb, nk: this.config.nk, estimationPeriodS: this.estimationPeriodS });
      if (bad !== null) return { ok: false, reason: bad };
      const pf = cp.prefilter;
      const wrong = this.est.restore(cp, this.config.controller.action);
      if (wrong !== null) return { ok: false, reason: wrong };
      this.rimDoubt = null;
      this.cond.prevSignals = pf.prev ? { ...pf.prev } : null;
      this.cond.filtered = { ...pf.filtered };
      this.samplesSeen = cp.samplesSeen;
      this.trends.radiusHistory = cp.radiusHistory.map((p) => radiusPoint(p.t, p.value, p.sd ?? null));
      this.lastStateAt = -Infinity;
      this.cachedHeadroom = { value: null, at: -Infinity };
      this.trends.clearForecast();
      return { ok: true };
    } catch (e) {
      return { ok: false, reason: `checkpoint rejected: ${(e as Error).message}` };
    }
  }
}


/**
 * A tracker's checkpoint (estimator states, counters, the radius history), written to
 * `estimator_checkpoints` every 60 s and at shutdown, and the checks a restore makes before it
 * touches anything: a checkpoint of another loop, structure, period or format is refused and the
 * loop relearns.
 */
import type { ArxEstimatorState } from "@/lib/control/arx";
import type { InstrumentalArxState } from "@/lib/control/riv";
import type { ResidualScreenState } from "@/lib/control/robust";
import type { ArxModel } from "@/lib/control/types";
import type { DataBlockState } from "./data-model";

/** One estimation sample (block averages, % of span) with its flags. */
export interface EstimationInput {
  u: number;
  y: number;
  r: number;
  manual: boolean;
  saturated: boolean;
  flat: boolean;
  t: number;
  bad: boolean;
  /** A sample of the block was stood in whole (an uncertain one, an unusable MV or SP): never learnt from. */
  whole?: boolean;
  /** The a-priori prediction error before an outlier was bounded (the fit watch takes the raw one). */
  rawE?: number;
}

/** A sample with a large prediction error, waiting for the next one to tell an outlier from a change. */
export interface PendingSample {
  sample: EstimationInput;
  /** The raw PV (% of span) that bounds its prediction error, and the error itself. */
  yBounded: number;
  rawE: number;
}

/** "Never" in a checkpoint (JSON cannot carry -Infinity): an estimation-sample index no loop reaches. */
export const NEVER = -1e15;

/** Serialisable tracker state (estimators and the radius history), for checkpoints. */
export interface TrackerCheckpoint {
  version: 2;
  loopId: number;
  /** The structure the estimators were built for; a restore into a different one is refused. */
  structure: { na: number; nb: number; nk: number; estimationPeriodS: number; dataOrder: number; dataDecimation?: number };
  /** Plant estimator of the configured structure, and the one with a pole fewer (null when na = 1). */
  plant: InstrumentalArxState;
  plantReduced: InstrumentalArxState | null;
  /** Last plausible plant model (held while the current estimate is not physical). */
  lastGood?: { model: ArxModel; cov: number[][]; at: number; misfit?: number | null } | null;
  data: ArxEstimatorState;
  /** The data-only model's block being averaged (absent in older checkpoints: a new block). */
  dataBlock?: DataBlockState | null;
  estimationSamples: number;
  lastPlantUpdate: number;
  lastSpMove: number;
  samplesSeen: number;
  /** The rim forecast's history; `sd` (the radius's delta-method sd) is absent in older checkpoints. */
  radiusHistory: { t: number; value: number; sd?: number }[];
  /** Written before 2026-12-04 for the fit figure (now the plant estimator's own sums); ignored. */
  yVariance?: number;
  yMean?: number;
  /** Prefilter state: last raw signals and the filtered values. */
  prefilter: { prev: { u: number; y: number; r: number } | null; filtered: { u: number; y: number; r: number } };
  /** Residual screen and its predictor history (absent in older checkpoints: they start afresh). */
  robust?: { screen: ResidualScreenState; predictor: { y: number[]; u: number[] }; taint: number; collapseInformative: number; pending: PendingSample | null } | null;
}

/** The structure a checkpoint must have been made for (a data-only model of another order or period is not a reason to refuse: it starts afresh). */
export interface CheckpointStructure {
  na: number;
  nb: number;
  nk: number;
  estimationPeriodS: number;
}

/** Why `cp` cannot be restored into a tracker of `want` (null when its outer shape is sound; the estimators check their own states). */
export function checkpointProblem(cp: TrackerCheckpoint, want: CheckpointStructure): string | null {
  const s = cp.structure;
  if (!s || s.na !== want.na || s.nb !== want.nb || s.nk !== want.nk || s.estimationPeriodS !== want.estimationPeriodS) {
    return "checkpoint was made for another model structure or estimation period";
  }
  const nums = [cp.estimationSamples, cp.lastPlantUpdate, cp.lastSpMove, cp.samplesSeen];
  if (!nums.every((v) => typeof v === "number" && Number.isFinite(v))) return "checkpoint counters are not finite numbers";
  if (!Array.isArray(cp.radiusHistory) || !cp.radiusHistory.every((p) => Number.isFinite(p?.t) && Number.isFinite(p?.value))) {
    return "checkpoint radius history is malformed";
  }
  const pf = cp.prefilter;
  const triple = (v: unknown): v is { u: number; y: number; r: number } =>
    !!v && typeof v === "object" && ["u", "y", "r"].every((k) => Number.isFinite((v as Record<string, unknown>)[k]));
  if (!pf || !triple(pf.filtered) || (pf.prev !== null && !triple(pf.prev))) return "checkpoint prefilter state is malformed";
  const lg = cp.lastGood;
  if (lg && !(Array.isArray(lg.model?.a) && Array.isArray(lg.model?.b) && [...lg.model.a, ...lg.model.b, lg.at].every(Number.isFinite) && Array.isArray(lg.cov))) {
    return "checkpoint last good model is malformed";
  }
  return null;
}

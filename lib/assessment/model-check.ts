/**
 * Cross-check of a routine-data verdict against the loop's tracked model (docs/assessment.md,
 * "Cross-check with the tracked model"). The routine figures see what the loop did in its window;
 * the tracked model (identified from set-point moves) says how the loop answers a change. Where
 * the model is trusted, the two are compared on one rule:
 *
 * - period: the cycle the routine data saw against the model's slowest-decaying oscillating pair,
 *   2π·T/|arg z| (`LoopAssessment.oscillation.periodS`, read, never recomputed here). Agreement
 *   within ±MODEL_PERIOD_TOLERANCE confirms an own-mode verdict (aggressive tuning) and adds to its
 *   confidence; disagreement says so and takes from it. For a cycle read as coming from outside
 *   (or from the valve) a model mode of another period supports that reading, and a poorly damped
 *   one of the same period is a rival explanation that takes from its confidence.
 * - damping: a model less damped than quarter amplitude (decay ratio above 0.25, the classic
 *   tuning target of Ziegler & Nichols 1942 — common practice) never leaves a confident
 *   "healthy" or "sluggish": quiet routine data only mean nothing excited the mode. Above
 *   POORLY_DAMPED (half amplitude per cycle) the verdict becomes likely aggressive tuning.
 * - speed: where the loop has a commissioned baseline time constant (`loops.baseline_time_constant_s`),
 *   a set-point response whose average residence time (lib/control/residence-time.ts) exceeds
 *   the tenant's multiple (work-list setting, default SLUGGISH_MULTIPLE) times that baseline turns a
 *   quiet verdict ("healthy", or confirms "sluggish-tuning") into likely sluggish tuning with the
 *   figures in its evidence: an engineering work-list item, never an operator alarm (it calls for
 *   retuning, not for an operator's response).
 *
 * The model counts only while the tracker is `tracking` on model-based poles and not undecided
 * near the rim; its decay ratio is taken with the radius moved one standard deviation toward the
 * origin (the alarms' confidence policy, `modeWithinConfidence`), so a poorly determined model
 * does not overturn a verdict. Pure: reads one LoopAssessment and one report.
 */
import { averageResidenceTime } from "@/lib/control/residence-time";
import { modeWithinConfidence, type LoopAssessment } from "@/lib/domain/assessment";
import type { LoopStateDto } from "@/lib/domain/types";
import { fmt } from "./oscillation";
import type { Diagnosis, LoopAssessmentReport } from "./types";

/** Model and routine periods agree when the longer is at most this much longer than the shorter (ours). */
export const MODEL_PERIOD_TOLERANCE = 0.2;
/** Quarter-amplitude damping: the classic tuning target (Ziegler & Nichols 1942; common practice). */
export const QUARTER_AMPLITUDE = 0.25;
/** Half amplitude per cycle (ζ ≈ 0.11): poorly damped by any tuning rule (ours, twice quarter amplitude in ratio). */
export const POORLY_DAMPED = 0.5;
/** Standard deviations the model's radius is moved toward the origin before judging it (the alarms' default). */
export const MODEL_SIGMAS = 1;
/** Confidence change when the model's period confirms or contradicts the routine reading (ours). */
const AGREE_GAIN = 0.1;
const DISAGREE_LOSS = 0.15;
/** Confidence of a "healthy"/"sluggish" the model contradicts, at most (below a work item's 0.6). */
const CONTRADICTED = 0.45;
/**
 * A set-point response slower than this many times the loop's commissioned baseline time constant
 * is likely sluggish tuning (ours; it was the `sluggish` alarm's default level). The default of the
 * tenant's work-list setting (`work_list_settings.sluggish_multiple`).
 */
export const SLUGGISH_MULTIPLE = 3;
/** Confidence of a sluggish-tuning verdict the model's slow response alone gives, at the multiple and at twice it (ours; above a work item's 0.6). */
const SLOW_CONFIDENCE = { atLevel: 0.65, atTwice: 0.8 };

/**
 * The figures of the tracker's assessment the check reads; the poles and zeros (the tracker's
 * `LoopStateDto`) and the loop's baseline time constant only for the speed check.
 */
export type ModelView = Pick<LoopAssessment, "trackerState" | "polesFrom" | "rimUndecided" | "oscillation" | "estimationPeriodS"> &
  Partial<Pick<LoopStateDto, "modelPoles" | "zeros">> & {
    /** The loop's commissioned closed-loop time constant, s (null or absent: no speed check). */
    baselineTimeConstantS?: number | null;
    /** The tenant's level, × the baseline (absent: SLUGGISH_MULTIPLE). */
    sluggishMultiple?: number;
  };

export type ModelCheckKind = "agree" | "disagree" | "poorly-damped" | "under-damped" | "slow" | "none";

/** The model's set-point response against the loop's baseline. */
export interface SlowResponse {
  /** Average residence time of the model's set-point response, s (poles one standard deviation toward the origin). */
  residenceS: number;
  baselineS: number;
  /** residenceS / baselineS. */
  ratio: number;
  multiple: number;
}

export interface ModelCheck {
  kind: ModelCheckKind;
  /** The model's pair: period (s) and decay ratio within confidence; null without a trusted oscillating pair. */
  model: { periodS: number; decayRatio: number } | null;
  /** The routine period compared, s. */
  routinePeriodS: number | null;
  /** For `slow`: the residence time against the baseline. */
  slow?: SlowResponse;
}

const OWN_MODE = new Set(["aggressive-tuning"]);
const FROM_OUTSIDE = new Set(["external-disturbance", "valve-stiction"]);
const QUIET = new Set(["healthy", "sluggish-tuning"]);

/** The model counts: tracking on model-based poles, not undecided near the rim. */
function isTrusted(model: ModelView | null | undefined): model is ModelView {
  return !!model && model.trackerState === "tracking" && model.polesFrom === "model" && !model.rimUndecided;
}

/** The trusted model's oscillating pair, or null (not tracking, data poles, undecided near the rim, no complex pair). */
export function trustedModelMode(model: ModelView | null | undefined): { periodS: number; decayRatio: number; rawDecayRatio: number } | null {
  if (!isTrusted(model)) return null;
  const osc = model.oscillation;
  if (!osc || !(osc.periodS > 0) || !Number.isFinite(osc.decayRatio)) return null;
  const within = modeWithinConfidence(osc, MODEL_SIGMAS);
  return { periodS: osc.periodS, decayRatio: within ? within.decayRatio : 0, rawDecayRatio: osc.decayRatio };
}

/**
 * The trusted model's set-point response when it is slower than the tenant's multiple (default
 * SLUGGISH_MULTIPLE) times the loop's baseline, else null (no trusted model, no baseline, no poles,
 * a pole on or outside the circle).
 * Each pole is moved MODEL_SIGMAS standard deviations of its radius toward the origin first, so a
 * poorly determined slow pole does not make the verdict.
 */
export function slowResponseOf(model: ModelView | null | undefined): SlowResponse | null {
  if (!isTrusted(model)) return null;
  const base = model.baselineTimeConstantS;
  const poles = model.modelPoles;
  if (base == null || !(base > 0) || !poles || poles.length === 0) return null;
  const residenceS = averageResidenceTime(poles, model.zeros ?? [], model.estimationPeriodS, MODEL_SIGMAS);
  if (residenceS === null) return null;
  const ratio = residenceS / base;
  const multiple = model.sluggishMultiple ?? SLUGGISH_MULTIPLE;
  return ratio > multiple ? { residenceS, baselineS: base, ratio, multiple } : null;
}

/** The period the routine data show: a detected oscillation's, or for ringing read as aggressive tuning, the error's dominant mode. */
function routinePeriodOf(report: LoopAssessmentReport): number | null {
  if (report.oscillation.detected && report.oscillation.periodS) return report.oscillation.periodS;
  if (report.diagnosis.label === "aggressive-tuning") return report.details.dominantPeriodS;
  return null;
}

/** Which way the model points for this report (no change of the report). */
export function checkAgainstModel(report: LoopAssessmentReport, model: ModelView | null | undefined): ModelCheck {
  const mode = trustedModelMode(model);
  const label = report.diagnosis.label;
  const routinePeriodS = routinePeriodOf(report);
  const m = mode ? { periodS: mode.periodS, decayRatio: mode.decayRatio } : null;
  if (QUIET.has(label)) {
    if (mode && mode.decayRatio > POORLY_DAMPED) return { kind: "poorly-damped", model: m, routinePeriodS };
    if (mode && mode.decayRatio > QUARTER_AMPLITUDE) return { kind: "under-damped", model: m, routinePeriodS };
    const slow = slowResponseOf(model);
    if (slow) return { kind: "slow", model: m, routinePeriodS, slow };
    return { kind: "none", model: m, routinePeriodS };
  }
  if (!mode || !m) return { kind: "none", model: null, routinePeriodS };
  if (routinePeriodS === null || !(routinePeriodS > 0) || (!OWN_MODE.has(label) && !FROM_OUTSIDE.has(label))) return { kind: "none", model: m, routinePeriodS };
  const ratio = Math.max(routinePeriodS, mode.periodS) / Math.min(routinePeriodS, mode.periodS);
  return { kind: ratio <= 1 + MODEL_PERIOD_TOLERANCE + 1e-12 ? "agree" : "disagree", model: m, routinePeriodS };
}

const clamp = (v: number) => Math.min(0.95, Math.max(0.3, v));

/**
 * The report with the model's word added (`modelCheck`), and its verdict adjusted by the rule
 * above. Without a trusted model, or when the model has nothing to say, the report is returned
 * unchanged (live = offline on the same samples).
 */
export function applyModelCheck<R extends LoopAssessmentReport>(report: R, model: ModelView | null | undefined): R & { modelCheck?: ModelCheck } {
  const check = checkAgainstModel(report, model);
  if (check.kind === "slow" && check.slow) return { ...report, diagnosis: slowDiagnosis(report.diagnosis, check.slow), modelCheck: check };
  if (check.kind === "none" || !check.model) return report;
  const d = report.diagnosis;
  const pair = `the tracked model's dominant pair (period ${fmt(check.model.periodS, 1)} s, decay ratio ${fmt(check.model.decayRatio)} per cycle within one standard deviation)`;
  let diagnosis: Diagnosis;
  switch (check.kind) {
    case "agree": {
      const own = OWN_MODE.has(d.label);
      // A poorly damped own mode at the cycle's period is a rival explanation of a cycle read as
      // coming from outside or from the valve; it is not made the verdict, because an outside
      // cycle can pull the tracked model toward its own period (tests/tracking/outside-oscillation.test.ts).
      const rival = !own && check.model.decayRatio > POORLY_DAMPED;
      const agreeing = `the cycle's period (${fmt(check.routinePeriodS, 1)} s) agrees within ±${pctOf(MODEL_PERIOD_TOLERANCE)} with ${pair}`;
      const line = own
        ? `${agreeing}: the loop's own mode`
        : rival
          ? `${agreeing}, a poorly damped mode: the cycle may be the loop's own (aggressive tuning), or an outside cycle the model has taken up; a spell in manual or a step test tells them apart`
          : `${agreeing}; the loop's own mode may take part in the cycle`;
      const confidence = own ? clamp(d.confidence + AGREE_GAIN) : rival ? clamp(d.confidence - DISAGREE_LOSS) : d.confidence;
      diagnosis = { ...d, confidence, evidence: [...d.evidence, line] };
      break;
    }
    case "disagree": {
      const own = OWN_MODE.has(d.label);
      const line = own
        ? `the cycle's period (${fmt(check.routinePeriodS, 1)} s) does not agree with ${pair} (beyond ±${pctOf(MODEL_PERIOD_TOLERANCE)}): the cycle may not be the loop's own mode`
        : `the cycle's period (${fmt(check.routinePeriodS, 1)} s) differs from ${pair} (beyond ±${pctOf(MODEL_PERIOD_TOLERANCE)}): the cycle is not the loop's own mode`;
      diagnosis = { ...d, confidence: own ? clamp(d.confidence - DISAGREE_LOSS) : clamp(d.confidence + 0.05), evidence: [...d.evidence, line] };
      break;
    }
    case "poorly-damped":
      // A quiet window beside a ringing model: healthy is contradicted (the model comes from
      // set-point responses, the quiet from a window nothing excited); "sluggish" and a ringing
      // model contradict each other, so neither is kept.
      diagnosis = d.label === "sluggish-tuning" ? {
        label: "undetermined",
        confidence: 0,
        reason: "the routine data read sluggish while the tracked model rings",
        evidence: [`the routine data read sluggish, but ${pair} rings more than half as high each cycle: the two disagree; a step test settles it`, ...d.evidence],
      } : {
        label: "aggressive-tuning",
        confidence: clamp(0.55 + (check.model.decayRatio - POORLY_DAMPED)),
        evidence: [
          `likely aggressive tuning: ${pair} rings more than half as high each cycle (quarter amplitude, ${QUARTER_AMPLITUDE}, is the classic limit; common practice)`,
          "the routine data read healthy over the window: nothing excited the mode strongly enough to show it; the next set-point move or load step will",
          ...d.evidence.map((l) => l.replace(/^likely healthy: /, "routine data alone: ")),
        ],
      };
      break;
    case "under-damped":
      diagnosis = {
        ...d,
        confidence: Math.min(d.confidence, CONTRADICTED),
        evidence: [...d.evidence, `but ${pair} is less damped than quarter amplitude (${QUARTER_AMPLITUDE}, the classic tuning target; common practice): the loop may ring after a set-point move or load step`],
      };
      break;
    default:
      return report;
  }
  return { ...report, diagnosis, modelCheck: check };
}

/** A quiet verdict beside a model whose set-point response is slower than the multiple allows: likely sluggish tuning. */
function slowDiagnosis(d: Diagnosis, slow: SlowResponse): Diagnosis {
  const line =
    `the tracked model's set-point response has an average residence time of ${fmt(slow.residenceS, 1)} s, ` +
    `${fmt(slow.ratio, 1)}× the loop's baseline time constant ${fmt(slow.baselineS, 1)} s (level ${slow.multiple}×; poles one standard deviation toward the origin)`;
  if (d.label === "sluggish-tuning") return { ...d, confidence: clamp(d.confidence + AGREE_GAIN), evidence: [...d.evidence, `${line}: the model agrees with the routine data`] };
  const over = Math.min(1, (slow.ratio - slow.multiple) / slow.multiple);
  return {
    label: "sluggish-tuning",
    confidence: SLOW_CONFIDENCE.atLevel + over * (SLOW_CONFIDENCE.atTwice - SLOW_CONFIDENCE.atLevel),
    evidence: [
      `likely sluggish tuning: ${line}`,
      "the routine data read healthy over the window: they show no cycle or trouble, but the loop answers a set-point move slowly; retuning (or a step test) is engineering work, not an operator alarm",
      ...d.evidence.map((l) => l.replace(/^likely healthy: /, "routine data alone: ")),
    ],
  };
}

function pctOf(v: number): string {
  return `${Math.round(100 * v)} %`;
}

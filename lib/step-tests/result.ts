/** What the offline identification of a step test returns (stored as JSON beside the test). */
import type { ArxCandidate, ArxModel } from "@/lib/control";
import type { QualityRange } from "@/lib/domain/sample-quality";
import type { DetrendMethod } from "./resample";

export const RESULT_VERSION = 1;
/** Most points kept for the chart of measured vs simulated PV. */
export const CHART_POINTS = 2000;

/** What the identification needs of the loop: its telemetry period and configured PV and MV ranges. */
export interface LoopForIdentification extends QualityRange {
  telemetryPeriodS: number;
}

export interface IdentifyOptions {
  detrend?: DetrendMethod;
  /** Longest dead time searched, seconds (default: a third of the record). */
  maxDeadTimeS?: number;
}

export interface PoleSummary {
  re: number;
  im: number;
  radius: number;
  kind: string;
  timeConstantS: number | null;
  wn: number | null;
  zeta: number | null;
}

export interface StepTestResult {
  version: number;
  data: {
    rows: number;
    /** Logged period (median step), seconds. */
    periodS: number;
    durationS: number;
    startTime: string | null;
    irregular: boolean;
    hasSp: boolean;
    /** Samples per mode at the logged period (null when the file has no mode column). */
    modes: Record<"auto" | "manual" | "cascade", number> | null;
    closedLoop: boolean;
    detrend: DetrendMethod;
    baseline: { mv: number; pv: number };
    leadInS: number;
  };
  identification: {
    /** Period the final model is sampled at, seconds. */
    periodS: number;
    samples: number;
    criterion: "fpe";
    model: ArxModel;
    fitPercent: number;
    loss: number;
    candidates: ArxCandidate[];
    passes: { periodS: number; na: number; nb: number; nk: number; fitPercent: number }[];
  };
  continuous: {
    /** FOPDT gain in PV units per MV unit (the ARX static gain when no FOPDT fits). */
    gain: number | null;
    /** %/% of span, using the loop's PV and MV spans. */
    gainPercent: number | null;
    /** Static gain B(1)/A(1) of the ARX model; null when it has a pole on or outside the circle. */
    arxGain: number | null;
    /** True when the PV ramps after a step (integrating, or slower than twice the record). */
    integrating: boolean;
    /** Integrating processes: ramp rate in PV units per second per MV unit, and in %/s per % of span. */
    rate: number | null;
    ratePercent: number | null;
    /** FOPDT (or, integrating, integrator) time constant and dead time, seconds (null when none fits). */
    timeConstantS: number | null;
    deadTimeS: number | null;
    fopdtFitPercent: number | null;
    method: string;
    poles: PoleSummary[];
  };
  proposal: {
    estimationPeriodS: number;
    factor: number;
    telemetryPeriodS: number;
    wnT: number;
    reason: string;
    modelStructure: { na: number; nb: number; nk: number };
  } | null;
  /**
   * For the chart, on the finest grid (the logged period, averaged down for long logs), thinned to
   * CHART_POINTS: measured PV, the ARX model's simulated PV (its samples every identification
   * period, linearly interpolated between them), the FOPDT (or integrator) summary's simulated PV,
   * MV and SP. All in engineering units; t in seconds from the start.
   */
  chart: { t: number[]; pvMeasured: number[]; pvSimulated: number[]; pvSummary: number[] | null; mv: number[]; sp: number[] | null };
  warnings: string[];
}

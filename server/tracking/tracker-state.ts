/**
 * The tracker's state record: an empty state to fill, and the configuration check a tracker
 * makes before it starts.
 */
import type { RoutineFindings } from "@/lib/domain/assessment";
import type { LoopStateDto, SampleDto, TrackerState } from "@/lib/domain/types";
import type { LoopConfig } from "./types";

export interface EmptyStateInput {
  config: LoopConfig;
  now: number;
  receivedAt: number | null;
  estimationPeriodS: number;
  samples: number;
  last: SampleDto | null;
  quality: LoopStateDto["sampleQuality"];
  /** The live routine assessment's latest verdict (server/assessment), carried in every state. */
  routine?: RoutineFindings | undefined;
}

/** A state with no figures yet: the tracker fills what its models allow. */
export function emptyState(c: EmptyStateInput, state: TrackerState, reason: string | null): LoopStateDto {
  return {
    loopId: c.config.id,
    tenantId: c.config.tenantId,
    at: c.now,
    receivedAt: c.receivedAt,
    trackerState: state,
    stateReason: reason,
    estimationPeriodS: c.estimationPeriodS,
    samples: c.samples,
    excitation: null,
    fitPercent: null,
    spectralRadius: null,
    rimDistance: null,
    decayRatio: null,
    juryStable: null,
    rimUndecided: false,
    dominant: null,
    gainHeadroom: null,
    radiusSd: null,
    forecast: null,
    modelPoles: [],
    dataPoles: [],
    dataPolesKind: "disturbance-response",
    zeros: [],
    characteristic: null,
    delaySamples: c.config.nk,
    last: c.last,
    sampleQuality: c.quality,
    ...(c.routine ? { routine: c.routine } : {}),
  };
}

/** Throws RangeError naming the first field that cannot configure a tracker. */
export function validateConfig(c: LoopConfig): void {
  const pos = (name: string, v: number) => {
    if (!(Number.isFinite(v) && v > 0)) throw new RangeError(`loop ${c.id}: ${name} must be a finite number > 0, got ${v}`);
  };
  pos("telemetryPeriodS", c.telemetryPeriodS);
  pos("controllerPeriodS", c.controllerPeriodS);
  pos("estimationPeriodS", c.estimationPeriodS);
  if (!(c.pvHi > c.pvLo)) throw new RangeError(`loop ${c.id}: pvHi must exceed pvLo`);
  if (!(c.mvHi > c.mvLo)) throw new RangeError(`loop ${c.id}: mvHi must exceed mvLo`);
  if (!(c.mvLimitHi > c.mvLimitLo)) throw new RangeError(`loop ${c.id}: mvLimitHi must exceed mvLimitLo`);
  for (const [n, v, min] of [["na", c.na, 1], ["nb", c.nb, 1], ["nk", c.nk, 1]] as const) {
    if (!Number.isInteger(v) || v < min) throw new RangeError(`loop ${c.id}: ${n} must be an integer >= ${min}, got ${v}`);
  }
  pos("controller.kp", c.controller.kp);
}

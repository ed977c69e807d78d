/**
 * What a loop tracker needs to know about its loop: the fields of the `loops` table (data layer)
 * in the units the tracker works in. The pipeline maps database rows to this shape through the one
 * loops reader (lib/data/loop-rows.ts) and the one tuning converter (lib/domain/tuning.ts).
 */

export interface ControllerTuning {
  /** Proportional gain, % MV per % PV (> 0; `action` gives the sign). */
  kp: number;
  /** Integral time, seconds; null = no integral action. */
  ti: number | null;
  /** Derivative time, seconds (0 = none). */
  td: number;
  /** Derivative filter time constant, seconds (0 = td / 10). */
  tf: number;
  action: "reverse" | "direct";
  form: "ideal" | "parallel" | "series";
}

export interface LoopConfig {
  id: number;
  tenantId: number;
  siteId: number;
  tag: string;
  /** PV range (engineering units): the span the controller's %/% gains refer to. */
  pvLo: number;
  pvHi: number;
  /** MV range (engineering units, often 0..100 %). */
  mvLo: number;
  mvHi: number;
  /** MV limits of the controller output (engineering units of the MV). */
  mvLimitLo: number;
  mvLimitHi: number;
  /** Nominal telemetry sample period, seconds. */
  telemetryPeriodS: number;
  /** Controller execution period, seconds. */
  controllerPeriodS: number;
  /** Estimation period, seconds (a whole multiple of the telemetry period; rounded to one). */
  estimationPeriodS: number;
  controller: ControllerTuning;
  /** ARX structure of the plant model MV -> PV at the estimation period. */
  na: number;
  nb: number;
  nk: number;
  /** RLS forgetting factor (default 0.995). */
  forgetting?: number;
  enabled?: boolean;
}

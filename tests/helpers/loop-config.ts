import type { LoopConfig } from "@/server/tracking/types";

/**
 * A tracker's loop configuration for tests: tenant 1, site 1, PV and MV spans and limits 0-100,
 * telemetry, controller and estimation period 1 s, a PI controller (kp 1, ti 10 s) in reverse
 * action, ideal form, ARX (2, 2, 1). `changes` replaces any field.
 */
export function testLoopConfig(changes: Partial<LoopConfig> = {}): LoopConfig {
  return {
    id: 1,
    tenantId: 1,
    siteId: 1,
    tag: "FIC-1",
    pvLo: 0,
    pvHi: 100,
    mvLo: 0,
    mvHi: 100,
    mvLimitLo: 0,
    mvLimitHi: 100,
    telemetryPeriodS: 1,
    controllerPeriodS: 1,
    estimationPeriodS: 1,
    controller: { kp: 1, ti: 10, td: 0, tf: 0, action: "reverse", form: "ideal" },
    na: 2,
    nb: 2,
    nk: 1,
    ...changes,
  };
}

/** PI tuning in the shape of `LoopConfig["controller"]` (no derivative action, reverse, ideal form). */
export function piTuning(kp: number, ti: number): LoopConfig["controller"] {
  return { kp, ti, td: 0, tf: 0, action: "reverse", form: "ideal" };
}

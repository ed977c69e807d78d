/** Shared test fixtures for the simulator suites (invented loops; numbers chosen for the tests). */
import type { LoopSimConfig } from "@/simulators/loop-sim";
import { activitySchema, type ActivitySpec, type DriftSpec, type PlantSpec, type ControllerSpec } from "@/simulators/scenario";

export const QUIET: ActivitySpec = activitySchema.parse({
  noiseSdPct: 0,
  loadStepEveryS: 0,
  loadWalkSdPct: 0,
  setpointEveryS: 0,
  manualEveryS: 0,
});

export function loopConfig(over: Partial<LoopSimConfig> & { plant?: PlantSpec; controller?: ControllerSpec; drift?: DriftSpec[] } = {}): LoopSimConfig {
  return {
    tenantSlug: "tenant-a",
    siteSlug: "site-1",
    tag: "FIC-100",
    telemetryPeriodS: 1,
    controllerPeriodS: 1,
    plant: { type: "first-order", gain: 1.5, timeConstantS: 20, deadTimeS: 2.5 },
    controller: { kp: 0.8, ti: 20, td: 0, tf: 0, action: "reverse", form: "ideal" },
    pvRange: [0, 200],
    mvRange: [0, 100],
    mvLimitsPct: [0, 100],
    spPct: 50,
    mvPct: 40,
    activity: activitySchema.parse({}),
    drift: [],
    seed: 42,
    ...over,
  };
}

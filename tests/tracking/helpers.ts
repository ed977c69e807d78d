/** Test helpers: a fake clock and tracker configurations that match simulated loops. */
import type { Clock } from "@/server/context";
import type { LoopConfig } from "@/server/tracking/types";
import type { LoopSim } from "@/simulators/loop-sim";
import type { PlantSpec } from "@/simulators/scenario";

export class FakeClock implements Clock {
  constructor(public t = Date.UTC(2026, 0, 5, 8, 0, 0)) {}
  now(): number {
    return this.t;
  }
  advance(ms: number): void {
    this.t += ms;
  }
  setTimeout(): { cancel(): void } {
    return { cancel() {} };
  }
  setInterval(): { cancel(): void } {
    return { cancel() {} };
  }
}

/** ARX(na, nb, nk) that holds a ZOH-sampled plant exactly: na = plant order, nk = whole delay + 1, nb grows with a fractional delay. */
export function arxStructureFor(plant: PlantSpec, T: number): { na: number; nb: number; nk: number } {
  const order = plant.type === "first-order" ? 1 : plant.type === "second-order" ? 2 : plant.lagS > 0 ? 2 : 1;
  const whole = Math.floor(plant.deadTimeS / T + 1e-9);
  const frac = plant.deadTimeS / T - whole > 1e-9 ? 1 : 0;
  return { na: order, nb: order + frac, nk: whole + 1 };
}

/** The tracker configuration of a simulated loop (the loop's true tuning and ranges). */
export function trackerConfigFor(sim: LoopSim, id = 1, over: Partial<LoopConfig> = {}): LoopConfig {
  const c = sim.config;
  const [mvLo, mvHi] = c.mvRange;
  const mvAt = (pct: number) => mvLo + ((mvHi - mvLo) * pct) / 100;
  return {
    id,
    tenantId: 1,
    siteId: 1,
    tag: c.tag,
    pvLo: c.pvRange[0],
    pvHi: c.pvRange[1],
    mvLo,
    mvHi,
    mvLimitLo: mvAt(c.mvLimitsPct[0]),
    mvLimitHi: mvAt(c.mvLimitsPct[1]),
    telemetryPeriodS: c.telemetryPeriodS,
    controllerPeriodS: c.controllerPeriodS,
    estimationPeriodS: c.telemetryPeriodS,
    controller: { kp: c.controller.kp, ti: c.controller.ti, td: c.controller.td, tf: c.controller.tf, action: c.controller.action, form: c.controller.form },
    ...arxStructureFor(c.plant, c.controllerPeriodS),
    ...over,
  };
}

/** Every number anywhere inside `value` (deep). */
export function allNumbers(value: unknown, out: number[] = []): number[] {
  if (typeof value === "number") out.push(value);
  else if (Array.isArray(value)) value.forEach((v) => allNumbers(v, out));
  else if (value && typeof value === "object") Object.values(value).forEach((v) => allNumbers(v, out));
  return out;
}

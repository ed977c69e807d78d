/**
 * Per-kind starting values for a loop imported from an inventory sheet, applied to every cell the
 * sheet leaves blank and shown in the import preview before anything is saved. They are common
 * practice for the kinds of loop named (no single published source), chosen for Rimguard as a
 * place to start until a step test or the tracker proposes better: flow and pressure loops are
 * fast with a small gain and short integral time, level loops are averaging (gentle integral),
 * temperature and composition loops are slow and often sampled less often. Pure: no I/O.
 */
import type { LoopKind } from "@/lib/domain/types";
import type { LoopFields } from "./loop-schema";
import { NEW_LOOP_DEFAULTS } from "./loop-schema";

/** The fields a sheet may leave blank (everything but tag, site and kind). */
export type DefaultableField = Exclude<keyof LoopFields, "siteId" | "areaId" | "tag" | "kind">;

type KindDefaults = Pick<LoopFields, DefaultableField>;

const base: KindDefaults = (() => {
  const { siteId: _s, areaId: _a, tag: _t, kind: _k, ...rest } = { siteId: 0, ...NEW_LOOP_DEFAULTS };
  return rest;
})();

export const KIND_DEFAULTS: Record<LoopKind, KindDefaults> = {
  flow: { ...base, units: "m³/h", gainValue: 0.5, tiValue: 5, telemetryPeriodS: 1, controllerPeriodS: 1, estimationPeriodS: 1 },
  pressure: { ...base, units: "bar", pvHi: 10, gainValue: 1, tiValue: 30, telemetryPeriodS: 1, controllerPeriodS: 1, estimationPeriodS: 1 },
  level: { ...base, units: "%", gainValue: 2, tiValue: 600, telemetryPeriodS: 1, controllerPeriodS: 1, estimationPeriodS: 5 },
  temperature: { ...base, units: "°C", pvHi: 200, gainValue: 2, tiValue: 240, telemetryPeriodS: 1, controllerPeriodS: 1, estimationPeriodS: 5 },
  composition: { ...base, units: "%", gainValue: 0.5, tiValue: 900, telemetryPeriodS: 5, controllerPeriodS: 5, estimationPeriodS: 30 },
  other: { ...base },
};

/**
 * Fill the blanks of one row from its kind's defaults. Periods follow the row's own telemetry
 * period when it gives one: the controller scan defaults to it, and the estimation period is at
 * least it (an estimation period is a decimation of the telemetry).
 */
export function applyKindDefaults(
  kind: LoopKind,
  given: Partial<Pick<LoopFields, DefaultableField>>,
): { fields: KindDefaults; defaulted: DefaultableField[] } {
  const d = KIND_DEFAULTS[kind];
  const fields = { ...d } as Record<string, unknown>;
  const defaulted: DefaultableField[] = [];
  for (const k of Object.keys(d) as DefaultableField[]) {
    if (given[k] !== undefined) fields[k] = given[k];
    else defaulted.push(k);
  }
  const telemetry = fields.telemetryPeriodS as number;
  if (given.telemetryPeriodS !== undefined) {
    if (given.controllerPeriodS === undefined) fields.controllerPeriodS = telemetry;
    if (given.estimationPeriodS === undefined) fields.estimationPeriodS = Math.max(d.estimationPeriodS, telemetry);
  }
  return { fields: fields as KindDefaults, defaulted };
}

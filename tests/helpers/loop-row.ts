import type { CreationAttributes } from "sequelize";
import type { Loop } from "@/models/loop";

/**
 * A `loops` row for tests at a place (tenant, site, area): flow loop FIC-101 in m3/h, PV 0-100,
 * no MV limits, PI with gain 1 and Ti 10 s, telemetry, controller and estimation period 1 s, no
 * derivative filter, no cascade master, nothing proposed yet. `changes` replaces any field.
 */
export function testLoopRow(
  place: { tenantId: number; siteId: number; areaId: number | null },
  changes: Partial<CreationAttributes<Loop>> = {},
): CreationAttributes<Loop> {
  return {
    ...place,
    tag: "FIC-101",
    slug: "fic-101",
    kind: "flow",
    units: "m3/h",
    pvLo: 0,
    pvHi: 100,
    mvLimitLo: null,
    mvLimitHi: null,
    telemetryPeriodS: 1,
    controllerPeriodS: 1,
    gainValue: 1,
    tiValue: 10,
    tfS: null,
    derivativeAlpha: null,
    cascadeMasterLoopId: null,
    estimationPeriodS: 1,
    estimationProposedS: null,
    baselineTimeConstantS: null,
    ...changes,
  };
}

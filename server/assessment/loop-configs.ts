/**
 * Loops as the live assessment needs them: the offline command's LOOP.json fields from the loops
 * table (kind, PV range, telemetry period, tuning in engineers' units, MV limits, dead time). One
 * query (lib/data/work-list.ts). The dead time is the engineer's (`loops.dead_time_s`), else that
 * of the loop's latest step test whose proposal was applied (accepted) to the loop, else none: the
 * Harris index is then null with a caution (routine closed-loop data cannot tell the dead time).
 */
import type { Sequelize } from "sequelize";
import { parseLoopConfig } from "@/lib/assessment";
import { selectLiveLoopRows } from "@/lib/data/work-list";
import { controllerTuningFromRow } from "../tracking/types";
import type { LiveLoop } from "./assessor";

/** The engineer's dead time, else the latest applied step test's, else null (s; a negative or non-finite value counts as none). */
function deadTimeOf(r: { deadTimeS: number | null; stepDeadTimeS: number | string | null }): number | null {
  for (const v of [r.deadTimeS, r.stepDeadTimeS]) {
    const x = v === null ? NaN : Number(v);
    if (Number.isFinite(x) && x >= 0) return x;
  }
  return null;
}

const KINDS = new Set(["flow", "level", "pressure", "temperature"]);

/** Enabled loops with a usable configuration (a bad row is skipped with its reason). */
export async function loadLiveLoops(sequelize: Sequelize, loopId?: number): Promise<{ loops: LiveLoop[]; errors: Map<number, string> }> {
  const rows = await selectLiveLoopRows(sequelize, loopId);
  const loops: LiveLoop[] = [];
  const errors = new Map<number, string>();
  for (const r of rows) {
    if (!(r.enabled === true || Number(r.enabled) === 1)) continue;
    const num = (v: number | null) => (v === null ? null : Number(v));
    try {
      const tuning = controllerTuningFromRow({
        gainKind: r.gainKind,
        gainValue: Number(r.gainValue),
        tiValue: num(r.tiValue),
        tiUnits: r.tiUnits,
        tdValue: num(r.tdValue),
        tdUnits: r.tdUnits,
        action: r.action,
        form: r.form,
      });
      const config = parseLoopConfig({
        tag: r.tag,
        description: r.description ?? "",
        kind: KINDS.has(r.kind) ? r.kind : "other",
        units: r.units ?? "",
        pvLo: Number(r.pvLo),
        pvHi: Number(r.pvHi),
        samplePeriodS: Number(r.telemetryPeriodS),
        deadTimeS: deadTimeOf(r),
        normalMode: "auto",
        controller: {
          kp: tuning.kp,
          ti: tuning.ti,
          td: tuning.td,
          action: tuning.action,
          mvLo: r.mvLimitLo === null ? Number(r.mvLo) : Number(r.mvLimitLo),
          mvHi: r.mvLimitHi === null ? Number(r.mvHi) : Number(r.mvLimitHi),
          form: tuning.form,
        },
      });
      loops.push({ loopId: Number(r.id), tenantId: Number(r.tenantId), siteId: Number(r.siteId), config });
    } catch (e) {
      errors.set(Number(r.id), e instanceof Error ? e.message : String(e));
    }
  }
  return { loops, errors };
}

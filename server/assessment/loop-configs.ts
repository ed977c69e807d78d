/**
 * Loops as the live assessment needs them: the offline command's LOOP.json fields from the loops
 * table (kind, PV range, telemetry period, tuning in engineers' units, MV limits). One query.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { parseLoopConfig } from "@/lib/assessment";
import { controllerTuningFromRow } from "../tracking/types";
import type { LiveLoop } from "./assessor";

interface Row {
  id: number;
  tenant_id: number;
  site_id: number;
  tag: string;
  description: string | null;
  kind: string;
  units: string | null;
  pv_lo: number;
  pv_hi: number;
  mv_lo: number;
  mv_hi: number;
  mv_limit_lo: number | null;
  mv_limit_hi: number | null;
  telemetry_period_s: number;
  action: "reverse" | "direct";
  form: "ideal" | "parallel" | "series";
  gain_kind: "gain" | "pb";
  gain_value: number;
  ti_value: number | null;
  ti_units: "s" | "min" | "repeats-per-min";
  td_value: number | null;
  td_units: "s" | "min";
  enabled: number | boolean;
}

const KINDS = new Set(["flow", "level", "pressure", "temperature"]);

/** Enabled loops with a usable configuration (a bad row is skipped with its reason). */
export async function loadLiveLoops(sequelize: Sequelize, loopId?: number): Promise<{ loops: LiveLoop[]; errors: Map<number, string> }> {
  const rows = await sequelize.query<Row>(`SELECT l.* FROM loops l ${loopId === undefined ? "" : "WHERE l.id = ?"} ORDER BY l.id`, {
    replacements: loopId === undefined ? [] : [loopId],
    type: QueryTypes.SELECT,
  });
  const loops: LiveLoop[] = [];
  const errors = new Map<number, string>();
  for (const r of rows) {
    if (!(r.enabled === true || Number(r.enabled) === 1)) continue;
    try {
      const tuning = controllerTuningFromRow({
        gainKind: r.gain_kind,
        gainValue: Number(r.gain_value),
        tiValue: r.ti_value === null ? null : Number(r.ti_value),
        tiUnits: r.ti_units,
        tdValue: r.td_value === null ? null : Number(r.td_value),
        tdUnits: r.td_units,
        action: r.action,
        form: r.form,
      });
      const config = parseLoopConfig({
        tag: r.tag,
        description: r.description ?? "",
        kind: KINDS.has(r.kind) ? r.kind : "other",
        units: r.units ?? "",
        pvLo: Number(r.pv_lo),
        pvHi: Number(r.pv_hi),
        samplePeriodS: Number(r.telemetry_period_s),
        deadTimeS: null,
        normalMode: "auto",
        controller: {
          kp: tuning.kp,
          ti: tuning.ti,
          td: tuning.td,
          action: tuning.action,
          mvLo: r.mv_limit_lo === null ? Number(r.mv_lo) : Number(r.mv_limit_lo),
          mvHi: r.mv_limit_hi === null ? Number(r.mv_hi) : Number(r.mv_limit_hi),
          form: tuning.form,
        },
      });
      loops.push({ loopId: Number(r.id), tenantId: Number(r.tenant_id), siteId: Number(r.site_id), config });
    } catch (e) {
      errors.set(Number(r.id), e instanceof Error ? e.message : String(e));
    }
  }
  return { loops, errors };
}

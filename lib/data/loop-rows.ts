/**
 * The loops table, read once and mapped once. Every reader of loop configuration (the REST loop
 * detail, the ingest route table and tracker configs, the live assessment, the backfill) selects
 * `l.*` and passes the row through `loopFromRow`; tuning in seconds comes only from the one
 * converter, `tuningSeconds` (lib/domain/tuning.ts), with the row's derivative filter.
 */
import { QueryTypes, type Sequelize } from "sequelize";
import type { LoopKind, LoopSummary } from "@/lib/domain/types";
import { tuningSeconds, type TuningFields, type TuningSeconds } from "@/lib/domain/tuning";

/** A row of `loops` as MariaDB returns it (snake_case; numbers may arrive as strings). */
export interface LoopRow {
  id: number;
  tenant_id: number;
  site_id: number;
  area_id: number | null;
  tag: string;
  slug: string;
  description: string | null;
  kind: LoopKind;
  units: string | null;
  pv_lo: number;
  pv_hi: number;
  mv_lo: number;
  mv_hi: number;
  mv_units: string;
  mv_limit_lo: number | null;
  mv_limit_hi: number | null;
  telemetry_period_s: number;
  controller_period_s: number;
  estimation_period_s: number;
  estimation_proposed_s: number | null;
  baseline_time_constant_s: number | null;
  action: TuningFields["action"];
  form: TuningFields["form"];
  gain_kind: TuningFields["gainKind"];
  gain_value: number;
  ti_value: number | null;
  ti_units: TuningFields["tiUnits"];
  td_value: number | null;
  td_units: TuningFields["tdUnits"];
  tf_s: number | null;
  derivative_alpha: number | null;
  na: number;
  nb: number;
  nk: number;
  dead_time_s: number | string | null;
  enabled: number | boolean;
}

/** A loop's stored configuration, typed; tuning as the site writes it. */
export interface StoredLoop extends Pick<LoopSummary, "id" | "tenantId" | "siteId" | "tag" | "slug" | "description" | "kind" | "units" | "pvLo" | "pvHi" | "estimationPeriodS"> {
  areaId: number | null;
  mvLo: number;
  mvHi: number;
  mvUnits: string;
  /** Output clamps inside the MV range; null = the range ends. */
  mvLimitLo: number | null;
  mvLimitHi: number | null;
  telemetryPeriodS: number;
  controllerPeriodS: number;
  estimationProposedS: number | null;
  baselineTimeConstantS: number | null;
  tuning: TuningFields;
  model: { na: number; nb: number; nk: number };
  /** The engineer's dead time (s), or null when not configured. */
  deadTimeS: number | null;
  enabled: boolean;
}

const num = (v: number | string | null): number | null => (v === null ? null : Number(v));

/** The one mapper from a loops row to a StoredLoop. */
export function loopFromRow(r: LoopRow): StoredLoop {
  return {
    id: Number(r.id),
    tenantId: Number(r.tenant_id),
    siteId: Number(r.site_id),
    areaId: num(r.area_id),
    tag: r.tag,
    slug: r.slug,
    description: r.description ?? "",
    kind: r.kind,
    units: r.units ?? "",
    pvLo: Number(r.pv_lo),
    pvHi: Number(r.pv_hi),
    mvLo: Number(r.mv_lo),
    mvHi: Number(r.mv_hi),
    mvUnits: r.mv_units,
    mvLimitLo: num(r.mv_limit_lo),
    mvLimitHi: num(r.mv_limit_hi),
    telemetryPeriodS: Number(r.telemetry_period_s),
    controllerPeriodS: Number(r.controller_period_s),
    estimationPeriodS: Number(r.estimation_period_s),
    estimationProposedS: num(r.estimation_proposed_s),
    baselineTimeConstantS: num(r.baseline_time_constant_s),
    tuning: {
      action: r.action,
      form: r.form,
      gainKind: r.gain_kind,
      gainValue: Number(r.gain_value),
      tiValue: num(r.ti_value),
      tiUnits: r.ti_units,
      tdValue: num(r.td_value),
      tdUnits: r.td_units,
      tfS: num(r.tf_s),
      derivativeAlpha: num(r.derivative_alpha),
    },
    model: { na: Number(r.na), nb: Number(r.nb), nk: Number(r.nk) },
    deadTimeS: num(r.dead_time_s ?? null),
    enabled: r.enabled === true || Number(r.enabled) === 1,
  };
}

/** A loop's tuning in seconds (throws RangeError on a tuning no controller can have). */
export function loopTuningSeconds(loop: Pick<StoredLoop, "tuning">): TuningSeconds {
  return tuningSeconds(loop.tuning);
}

/** The MV limits a controller clamps at: the configured clamps, else the MV range. */
export function mvLimits(loop: Pick<StoredLoop, "mvLo" | "mvHi" | "mvLimitLo" | "mvLimitHi">): { lo: number; hi: number } {
  return { lo: loop.mvLimitLo ?? loop.mvLo, hi: loop.mvLimitHi ?? loop.mvHi };
}

/** A loop with the slugs of its tenant and site (the telemetry topic). */
export interface RoutedLoop extends StoredLoop {
  tenantSlug: string;
  siteSlug: string;
}

/** Every loop (or one), ordered by id, with its topic slugs; disabled loops included. */
export async function readLoops(sequelize: Sequelize, loopId?: number): Promise<RoutedLoop[]> {
  const rows = await sequelize.query<LoopRow & { tenant_slug: string; site_slug: string }>(
    `SELECT l.*, t.slug AS tenant_slug, s.slug AS site_slug
       FROM loops l
       JOIN tenants t ON t.id = l.tenant_id
       JOIN sites s ON s.id = l.site_id AND s.tenant_id = l.tenant_id
      ${loopId === undefined ? "" : "WHERE l.id = ?"}
      ORDER BY l.id`,
    { replacements: loopId === undefined ? [] : [loopId], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({ ...loopFromRow(r), tenantSlug: r.tenant_slug, siteSlug: r.site_slug }));
}

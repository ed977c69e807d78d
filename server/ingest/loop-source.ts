/**
 * Loop configurations as the live pipeline needs them: the topic route (tenant/site/loop slugs ->
 * loop id) and the tracker's LoopConfig, read from MariaDB in one query. Rows whose tuning cannot
 * build a tracker come back with the reason instead of a config; they still route (so their
 * telemetry is counted, not refused as unknown).
 */
import { QueryTypes, type Sequelize } from "sequelize";
import { controllerTuningFromRow, type LoopConfig } from "../tracking/types";

export interface LoopRouteRow {
  loopId: number;
  tenantId: number;
  siteId: number;
  tenantSlug: string;
  siteSlug: string;
  loopSlug: string;
  range: { pvLo: number; pvHi: number; mvLo: number; mvHi: number };
}

export interface LoadedLoop {
  route: LoopRouteRow;
  config: LoopConfig | null;
  /** Why no config could be built (bad tuning). */
  error: string | null;
  enabled: boolean;
}

interface Row {
  id: number;
  tenant_id: number;
  site_id: number;
  tenant_slug: string;
  site_slug: string;
  tag: string;
  slug: string;
  pv_lo: number;
  pv_hi: number;
  mv_lo: number;
  mv_hi: number;
  mv_limit_lo: number | null;
  mv_limit_hi: number | null;
  telemetry_period_s: number;
  controller_period_s: number;
  action: "reverse" | "direct";
  form: "ideal" | "parallel" | "series";
  gain_kind: "gain" | "pb";
  gain_value: number;
  ti_value: number | null;
  ti_units: "s" | "min" | "repeats-per-min";
  td_value: number | null;
  td_units: "s" | "min";
  tf_s: number | null;
  derivative_alpha: number | null;
  na: number;
  nb: number;
  nk: number;
  estimation_period_s: number;
  enabled: number | boolean;
}

export async function loadLoopConfigs(sequelize: Sequelize, loopId?: number): Promise<LoadedLoop[]> {
  const rows = await sequelize.query<Row>(
    `SELECT l.*, t.slug AS tenant_slug, s.slug AS site_slug
       FROM loops l
       JOIN tenants t ON t.id = l.tenant_id
       JOIN sites s ON s.id = l.site_id AND s.tenant_id = l.tenant_id
      ${loopId === undefined ? "" : "WHERE l.id = ?"}
      ORDER BY l.id`,
    { replacements: loopId === undefined ? [] : [loopId], type: QueryTypes.SELECT },
  );
  return rows.map(toLoaded);
}

function toLoaded(r: Row): LoadedLoop {
  const route: LoopRouteRow = {
    loopId: Number(r.id),
    tenantId: Number(r.tenant_id),
    siteId: Number(r.site_id),
    tenantSlug: r.tenant_slug,
    siteSlug: r.site_slug,
    loopSlug: r.slug,
    range: { pvLo: Number(r.pv_lo), pvHi: Number(r.pv_hi), mvLo: Number(r.mv_lo), mvHi: Number(r.mv_hi) },
  };
  const enabled = r.enabled === true || Number(r.enabled) === 1;
  try {
    const controller = controllerTuningFromRow({
      gainKind: r.gain_kind,
      gainValue: Number(r.gain_value),
      tiValue: r.ti_value === null ? null : Number(r.ti_value),
      tiUnits: r.ti_units,
      tdValue: r.td_value === null ? null : Number(r.td_value),
      tdUnits: r.td_units,
      tfS: r.tf_s,
      derivativeAlpha: r.derivative_alpha,
      action: r.action,
      form: r.form,
    });
    const config: LoopConfig = {
      id: route.loopId,
      tenantId: route.tenantId,
      siteId: route.siteId,
      tag: r.tag,
      pvLo: Number(r.pv_lo),
      pvHi: Number(r.pv_hi),
      mvLo: Number(r.mv_lo),
      mvHi: Number(r.mv_hi),
      mvLimitLo: r.mv_limit_lo === null ? Number(r.mv_lo) : Number(r.mv_limit_lo),
      mvLimitHi: r.mv_limit_hi === null ? Number(r.mv_hi) : Number(r.mv_limit_hi),
      telemetryPeriodS: Number(r.telemetry_period_s),
      controllerPeriodS: Number(r.controller_period_s),
      estimationPeriodS: Number(r.estimation_period_s),
      controller,
      na: Number(r.na),
      nb: Number(r.nb),
      nk: Number(r.nk),
      enabled,
    };
    return { route, config, error: null, enabled };
  } catch (e) {
    return { route, config: null, error: e instanceof Error ? e.message : String(e), enabled };
  }
}

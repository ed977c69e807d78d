/**
 * Loop configurations as the live pipeline needs them: the topic route (tenant/site/loop slugs ->
 * loop id) and the tracker's LoopConfig, from the one loops reader (lib/data/loop-rows.ts). Rows whose tuning cannot
 * build a tracker come back with the reason instead of a config; they still route (so their
 * telemetry is counted, not refused as unknown).
 */
import type { Sequelize } from "sequelize";
import { loopTuningSeconds, mvLimits, readLoops, type RoutedLoop } from "@/lib/data/loop-rows";
import type { LoopConfig } from "../tracking/types";
import type { LoopRoute } from "./directory";

/** A loop's topic route as read from the database: its configured ranges are always known. */
export type LoopRouteRow = Required<LoopRoute>;

export interface LoadedLoop {
  route: LoopRouteRow;
  config: LoopConfig | null;
  /** Why no config could be built (bad tuning). */
  error: string | null;
  enabled: boolean;
}

/** Every loop (or one) with its route and, when its tuning allows, the tracker's config. */
export async function loadLoopConfigs(sequelize: Sequelize, loopId?: number): Promise<LoadedLoop[]> {
  return (await readLoops(sequelize, loopId)).map(toLoaded);
}

function toLoaded(l: RoutedLoop): LoadedLoop {
  const route: LoopRouteRow = {
    loopId: l.id,
    tenantId: l.tenantId,
    siteId: l.siteId,
    tenantSlug: l.tenantSlug,
    siteSlug: l.siteSlug,
    loopSlug: l.slug,
    range: { pvLo: l.pvLo, pvHi: l.pvHi, mvLo: l.mvLo, mvHi: l.mvHi },
  };
  try {
    const mv = mvLimits(l);
    const config: LoopConfig = {
      id: l.id,
      tenantId: l.tenantId,
      siteId: l.siteId,
      tag: l.tag,
      pvLo: l.pvLo,
      pvHi: l.pvHi,
      mvLo: l.mvLo,
      mvHi: l.mvHi,
      mvLimitLo: mv.lo,
      mvLimitHi: mv.hi,
      telemetryPeriodS: l.telemetryPeriodS,
      controllerPeriodS: l.controllerPeriodS,
      estimationPeriodS: l.estimationPeriodS,
      controller: loopTuningSeconds(l),
      na: l.model.na,
      nb: l.model.nb,
      nk: l.model.nk,
      enabled: l.enabled,
    };
    return { route, config, error: null, enabled: l.enabled };
  } catch (e) {
    return { route, config: null, error: e instanceof Error ? e.message : String(e), enabled: l.enabled };
  }
}

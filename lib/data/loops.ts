/**
 * Read-side query functions for loops (the REST API and server components). Every query is
 * scoped to the caller's tenant; another tenant's loop is "not found" (null), never "forbidden".
 * Returns plain typed objects. The live tracker state comes from the running pipeline when there
 * is one, else from the last state stored in loop_states.
 */
import "server-only";
import { QueryTypes, type Sequelize } from "sequelize";
import { z } from "zod";
import { getDb, getSequelize } from "@/lib/data/db/sequelize";
import { runningService } from "@/lib/data/server-context";
import { findOwned, siteScopeSql } from "@/lib/data/tenancy";
import { loopFromRow, type LoopRow, type StoredLoop } from "@/lib/data/loop-rows";
import type { TuningFields } from "@/lib/domain/tuning";
import type { AlarmDto, LoopStateDto, LoopSummary, TenantContext } from "@/lib/domain/types";

export { getLoopHistory, historyColumns, historySchema, type LoopHistory, type LoopHistoryColumns, type HistoryPoint, type HistorySnapshot } from "./loop-history";

export interface LoopDeps {
  sequelize?: Sequelize;
  /** Live state lookup (default: the running pipeline's trackers). */
  liveState?: (loopId: number) => LoopStateDto | null;
}

type Ctx = Pick<TenantContext, "tenantId" | "siteIds">;

/** A loop with its configuration; tuning as the site writes it (no derivative filter; Td 0 = off). */
export interface LoopDetail
  extends LoopSummary,
    Pick<StoredLoop, "mvLo" | "mvHi" | "mvUnits" | "mvLimitLo" | "mvLimitHi" | "telemetryPeriodS" | "controllerPeriodS" | "estimationProposedS" | "baselineTimeConstantS" | "model" | "enabled"> {
  tuning: Omit<TuningFields, "tfS" | "derivativeAlpha" | "tdValue"> & { tdValue: number };
}

interface Row extends LoopRow {
  site_name: string;
  area_name: string | null;
  stored_state: string | LoopStateDto | null;
}

const BASE_SELECT = `SELECT l.*, s.name AS site_name, a.name AS area_name, ls.latest AS stored_state
  FROM loops l
  JOIN sites s ON s.id = l.site_id AND s.tenant_id = l.tenant_id
  LEFT JOIN areas a ON a.id = l.area_id AND a.tenant_id = l.tenant_id
  LEFT JOIN loop_states ls ON ls.loop_id = l.id AND ls.tenant_id = l.tenant_id`;

function tenantIdOf(ctx: Ctx): number {
  if (!ctx || !Number.isInteger(ctx.tenantId) || ctx.tenantId <= 0) throw new Error("Loop queries need a tenant context with a valid tenantId.");
  return ctx.tenantId;
}

function defaultLiveState(loopId: number): LoopStateDto | null {
  const svc = runningService("pipeline");
  return typeof svc?.loopState === "function" ? svc.loopState(loopId) : null;
}

function parseState(v: string | LoopStateDto | null): LoopStateDto | null {
  if (v === null) return null;
  if (typeof v !== "string") return v;
  try {
    return JSON.parse(v) as LoopStateDto;
  } catch {
    return null;
  }
}

async function activeAlarms(sequelize: Sequelize, tenantId: number, loopIds: number[]): Promise<Map<number, LoopSummary["alarms"]>> {
  const out = new Map<number, LoopSummary["alarms"]>();
  if (loopIds.length === 0) return out;
  const rows = await sequelize.query<{ id: number; loop_id: number; condition: AlarmDto["condition"]; priority: AlarmDto["priority"]; state: AlarmDto["state"] }>(
    "SELECT id, loop_id, `condition`, priority, state FROM alarms WHERE tenant_id = ? AND loop_id IN (?) AND state <> 'normal' ORDER BY id",
    { replacements: [tenantId, loopIds], type: QueryTypes.SELECT },
  );
  for (const r of rows) {
    const list = out.get(Number(r.loop_id)) ?? [];
    list.push({ id: Number(r.id), condition: r.condition, priority: r.priority, state: r.state });
    out.set(Number(r.loop_id), list);
  }
  return out;
}

function summary(r: Row, l: StoredLoop, live: (id: number) => LoopStateDto | null, alarms: Map<number, LoopSummary["alarms"]>): LoopSummary {
  return {
    id: l.id,
    tenantId: l.tenantId,
    siteId: l.siteId,
    siteName: r.site_name,
    area: r.area_name,
    tag: l.tag,
    slug: l.slug,
    description: l.description,
    kind: l.kind,
    units: l.units,
    pvLo: l.pvLo,
    pvHi: l.pvHi,
    estimationPeriodS: l.estimationPeriodS,
    state: live(l.id) ?? parseState(r.stored_state),
    alarms: alarms.get(l.id) ?? [],
  };
}

/** Every loop of the caller's tenant, ordered by site and tag. */
export async function listLoops(ctx: Ctx, deps: LoopDeps = {}): Promise<LoopSummary[]> {
  const tenantId = tenantIdOf(ctx);
  const sequelize = deps.sequelize ?? getSequelize();
  const scope = siteScopeSql(ctx, "l.site_id");
  const rows = await sequelize.query<Row>(`${BASE_SELECT} WHERE l.tenant_id = ?${scope.sql} ORDER BY s.name, l.tag`, { replacements: [tenantId, ...scope.args], type: QueryTypes.SELECT });
  const alarms = await activeAlarms(sequelize, tenantId, rows.map((r) => Number(r.id)));
  return rows.map((r) => summary(r, loopFromRow(r), deps.liveState ?? defaultLiveState, alarms));
}

/** One loop of the caller's tenant with its configuration, or null. */
export async function getLoop(ctx: Ctx, loopId: number, deps: LoopDeps = {}): Promise<LoopDetail | null> {
  const tenantId = tenantIdOf(ctx);
  if (!Number.isSafeInteger(loopId) || loopId <= 0) return null;
  const sequelize = deps.sequelize ?? getSequelize();
  const scope = siteScopeSql(ctx, "l.site_id");
  const rows = await sequelize.query<Row>(`${BASE_SELECT} WHERE l.tenant_id = ? AND l.id = ?${scope.sql}`, { replacements: [tenantId, loopId, ...scope.args], type: QueryTypes.SELECT });
  const r = rows[0];
  if (!r) return null;
  const alarms = await activeAlarms(sequelize, tenantId, [loopId]);
  const l = loopFromRow(r);
  const { tfS: _tf, derivativeAlpha: _alpha, ...tuning } = l.tuning;
  return {
    ...summary(r, l, deps.liveState ?? defaultLiveState, alarms),
    mvLo: l.mvLo,
    mvHi: l.mvHi,
    mvUnits: l.mvUnits,
    mvLimitLo: l.mvLimitLo,
    mvLimitHi: l.mvLimitHi,
    telemetryPeriodS: l.telemetryPeriodS,
    controllerPeriodS: l.controllerPeriodS,
    estimationProposedS: l.estimationProposedS,
    baselineTimeConstantS: l.baselineTimeConstantS,
    tuning: { ...tuning, tdValue: tuning.tdValue ?? 0 },
    model: l.model,
    enabled: l.enabled,
  };
}

/** The tenant owning a loop id, or null (used by the realtime watch check outside a request). */
export async function loopTenantId(loopId: number, deps: Pick<LoopDeps, "sequelize"> = {}): Promise<number | null> {
  const sequelize = deps.sequelize ?? getSequelize();
  const rows = await sequelize.query<{ tenant_id: number }>("SELECT tenant_id FROM loops WHERE id = ?", { replacements: [loopId], type: QueryTypes.SELECT });
  return rows[0] ? Number(rows[0].tenant_id) : null;
}

/** The tenant and site of a loop id, or null (pages check both against the caller's context). */
export async function loopOwner(loopId: number, deps: Pick<LoopDeps, "sequelize"> = {}): Promise<{ tenantId: number; siteId: number } | null> {
  const sequelize = deps.sequelize ?? getSequelize();
  const rows = await sequelize.query<{ tenant_id: number; site_id: number }>("SELECT tenant_id, site_id FROM loops WHERE id = ?", { replacements: [loopId], type: QueryTypes.SELECT });
  return rows[0] ? { tenantId: Number(rows[0].tenant_id), siteId: Number(rows[0].site_id) } : null;
}

/** The ids of the loops a context may see, or null when it sees every loop of its tenant. */
export async function visibleLoopIds(ctx: Pick<TenantContext, "tenantId" | "siteIds">, deps: Pick<LoopDeps, "sequelize"> = {}): Promise<Set<number> | null> {
  if (!ctx.siteIds) return null;
  const sequelize = deps.sequelize ?? getSequelize();
  const scope = siteScopeSql(ctx, "site_id");
  const rows = await sequelize.query<{ id: number }>(`SELECT id FROM loops WHERE tenant_id = ?${scope.sql}`, { replacements: [ctx.tenantId, ...scope.args], type: QueryTypes.SELECT });
  return new Set(rows.map((r) => Number(r.id)));
}

/** Whether the loop belongs to the caller's tenant and site scope. */
export async function ownsLoop(ctx: Ctx, loopId: number): Promise<boolean> {
  return (await findOwned(getDb().models.Loop, ctx, loopId)) !== null;
}

/** A loop id in a URL: a positive integer (422 otherwise). */
export const loopIdSchema = z.coerce.number().int().positive().max(Number.MAX_SAFE_INTEGER);

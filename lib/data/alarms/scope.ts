/**
 * Site scope for the alarm routes: a member limited to some sites sees and acts on the alarms of
 * those sites' loops only; any other alarm is a 404, worded like a missing one.
 */
import "server-only";
import { QueryTypes } from "sequelize";
import { getSequelize } from "@/lib/data/db/sequelize";
import { NotFoundError } from "@/lib/domain/errors";
import { siteScopeSql } from "@/lib/data/tenancy";
import { visibleLoopIds } from "@/lib/data/loops";
import type { TenantContext } from "@/lib/domain/types";
import { alarmApi } from "@/lib/data/server-context";
import { computeAlarmKpis, type AlarmKpis, type OccurrenceRecord } from "@/lib/domain/alarms/kpis";

type Ctx = Pick<TenantContext, "tenantId" | "siteIds">;

export async function assertAlarmVisible(ctx: Ctx, alarmId: number): Promise<void> {
  if (!ctx.siteIds) return;
  const alarm = alarmApi().get(ctx.tenantId, alarmId);
  const visible = await visibleLoopIds(ctx);
  if (!alarm || !visible?.has(alarm.loopId)) throw new NotFoundError("Alarm");
}

export async function visibleAlarms<T extends { loopId: number }>(ctx: Ctx, alarms: T[]): Promise<T[]> {
  const visible = await visibleLoopIds(ctx);
  return visible ? alarms.filter((a) => visible.has(a.loopId)) : alarms;
}

/**
 * Alarm-system figures (lib/domain/alarms/kpis.ts) over the alarms of the loops a site-scoped member may
 * see; an unscoped member gets the alarm service's tenant-wide figures instead.
 */
export async function scopedAlarmKpis(ctx: Ctx & { siteIds: number[] }, from: number, to: number, areaId: number | null): Promise<AlarmKpis> {
  const scope = siteScopeSql(ctx, "l.site_id");
  const rows = await getSequelize().query<{ alarm_id: number; loop_id: number; area_id: number | null; priority: OccurrenceRecord["priority"]; started_at: Date; ended_at: Date | null }>(
    `SELECT o.alarm_id, o.loop_id, o.area_id, o.priority, o.started_at, o.ended_at FROM alarm_occurrences o JOIN loops l ON l.id = o.loop_id
      WHERE o.tenant_id = ? AND o.started_at < ? AND (o.started_at >= ? OR o.ended_at IS NULL OR o.ended_at > ?)${scope.sql}${areaId != null ? " AND o.area_id = ?" : ""}`,
    { replacements: [ctx.tenantId, new Date(to), new Date(from), new Date(from), ...scope.args, ...(areaId != null ? [areaId] : [])], type: QueryTypes.SELECT },
  );
  return computeAlarmKpis(
    rows.map((r) => ({
      alarmId: Number(r.alarm_id),
      loopId: Number(r.loop_id),
      areaId: r.area_id == null ? null : Number(r.area_id),
      priority: r.priority,
      startedAt: new Date(r.started_at).getTime(),
      endedAt: r.ended_at == null ? null : new Date(r.ended_at).getTime(),
    })),
    from,
    to,
  );
}

/**
 * Site scope for the alarm routes: a member limited to some sites sees and acts on the alarms of
 * those sites' loops only; any other alarm is a 404, worded like a missing one.
 */
import { NotFoundError } from "@/lib/errors";
import { visibleLoopIds } from "@/lib/loops";
import type { TenantContext } from "@/lib/types";
import { alarmApi } from "./access";

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

/** GET /api/alarms/[alarmId] — one alarm with its occurrences and events (newest first). */
import { NextResponse } from "next/server";
import { alarmApi, parseId } from "@/lib/alarms/access";
import { assertAlarmVisible } from "@/lib/data/alarms/scope";
import { requireContext } from "@/lib/auth/guard";
import { handle } from "@/lib/http";

export const dynamic = "force-dynamic";

export const GET = handle(async (_req: Request, { params }: { params: Promise<{ alarmId: string }> }) => {
  const ctx = await requireContext("viewer");
  const id = parseId((await params).alarmId, "alarm id");
  await assertAlarmVisible(ctx, id);
  return NextResponse.json(await alarmApi().detail(ctx.tenantId, id));
});

/** GET /api/alarms/[alarmId] — one alarm with its occurrences and events (newest first). */
import { NextResponse } from "next/server";
import { alarmApi } from "@/lib/data/server-context";
import { parseId, handle } from "@/lib/http";
import { assertAlarmVisible } from "@/lib/data/alarms/scope";
import { requireContext } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";

export const GET = handle(async (_req: Request, { params }: { params: Promise<{ alarmId: string }> }) => {
  const ctx = await requireContext("viewer");
  const id = parseId((await params).alarmId, "alarm id");
  await assertAlarmVisible(ctx, id);
  return NextResponse.json(await alarmApi().detail(ctx.tenantId, id));
});

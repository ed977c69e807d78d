/** POST /api/alarms/[alarmId]/shelve { minutes, reason } — operator or higher; time-limited by the alarm policy. */
import { NextResponse } from "next/server";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { alarmApi } from "@/lib/data/server-context";
import { parseId, handle, parseBody } from "@/lib/http";
import { assertAlarmVisible } from "@/lib/data/alarms/scope";
import { requireContext } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";

const body = z.object({ minutes: z.number().positive(), reason: text().trim().min(1, "a reason is required").max(1000) });

export const POST = handle(async (req: Request, { params }: { params: Promise<{ alarmId: string }> }) => {
  const ctx = await requireContext("operator");
  const id = parseId((await params).alarmId, "alarm id");
  await assertAlarmVisible(ctx, id);
  const b = await parseBody(req, body);
  return NextResponse.json({ alarm: alarmApi().shelve(ctx, id, b.minutes, b.reason) });
});

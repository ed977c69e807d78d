/** POST /api/alarms/[alarmId]/unshelve { comment? } — operator or higher; a still-active alarm is announced again. */
import { NextResponse } from "next/server";
import { z } from "zod";
import { text } from "@/lib/text-input";
import { alarmApi } from "@/lib/data/server-context";
import { parseId, parseOptionalBody, handle } from "@/lib/http";
import { assertAlarmVisible } from "@/lib/data/alarms/scope";
import { requireContext } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";

const body = z.object({ comment: text().max(1000).nullish() });

export const POST = handle(async (req: Request, { params }: { params: Promise<{ alarmId: string }> }) => {
  const ctx = await requireContext("operator");
  const id = parseId((await params).alarmId, "alarm id");
  await assertAlarmVisible(ctx, id);
  const b = await parseOptionalBody(req, body);
  return NextResponse.json({ alarm: alarmApi().unshelve(ctx, id, b.comment ?? null) });
});

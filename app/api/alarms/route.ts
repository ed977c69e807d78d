/** GET /api/alarms?state=&priority=&loopId=&from=&to= — the tenant's alarm points, worst first. */
import { NextResponse } from "next/server";
import { z } from "zod";
import { alarmApi } from "@/lib/data/server-context";
import { isoTime, handle, parseQuery } from "@/lib/http";
import { visibleAlarms } from "@/lib/data/alarms/scope";
import { requireContext } from "@/lib/auth/guard";
import { ALARM_PRIORITIES, ALARM_STATES } from "@/lib/domain/types";

export const dynamic = "force-dynamic";

const query = z
  .object({
    state: z.enum(ALARM_STATES).optional(),
    priority: z.enum(ALARM_PRIORITIES).optional(),
    loopId: z.coerce.number().int().positive().optional(),
    from: isoTime.optional(),
    to: isoTime.optional(),
  })
  .strict()
  .refine((q) => q.from == null || q.to == null || q.from < q.to, { message: "`from` must be before `to`" });

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const q = parseQuery(req, query);
  return NextResponse.json({ alarms: await visibleAlarms(ctx, alarmApi().list(ctx.tenantId, q)) });
});

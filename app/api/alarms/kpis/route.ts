/**
 * GET /api/alarms/kpis?from=&to=&area= — alarm-system figures of a period (EEMUA 191 and
 * ANSI/ISA-18.2; see lib/domain/alarms/kpis.ts). Default period: the last 24 hours; at most 31 days.
 */
import { NextResponse } from "next/server";
import { z } from "zod";
import { alarmApi } from "@/lib/data/server-context";
import { isoTime, handle, parseQuery } from "@/lib/http";
import { scopedAlarmKpis } from "@/lib/data/alarms/scope";
import { requireContext } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";

const DAY = 24 * 3600_000;
const query = z
  .object({ from: isoTime.optional(), to: isoTime.optional(), area: z.coerce.number().int().positive().optional() })
  .strict();

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const q = parseQuery(req, query);
  const to = q.to ?? Date.now();
  const from = q.from ?? to - DAY;
  if (!(from < to)) throw new z.ZodError([{ code: "custom", path: ["from"], message: "`from` must be before `to`", input: q.from }]);
  if (to - from > 31 * DAY) throw new z.ZodError([{ code: "custom", path: ["from"], message: "the period may be at most 31 days", input: q.from }]);
  const k = ctx.siteIds ? await scopedAlarmKpis({ ...ctx, siteIds: ctx.siteIds }, from, to, q.area ?? null) : await alarmApi().kpis(ctx.tenantId, from, to, q.area ?? null);
  return NextResponse.json({ ...k, from: new Date(from).toISOString(), to: new Date(to).toISOString() });
});

/**
 * GET /api/reports/fleet-health?from=&to=&siteId=&areaId=&kind=&granularity=week|month&format=json|csv|pdf —
 * share of loops by diagnosis label per week or month, from the daily summaries (viewer).
 * Default period: the last 12 weeks.
 */
import { NextResponse } from "next/server";
import { z } from "zod";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseQuery } from "@/lib/http";
import { buildFleetHealth } from "@/lib/reports/fleet-health";
import { fleetHealthDocument } from "@/lib/reports/fleet-health-document";
import { periodOf, periodReportQuery } from "@/lib/reports/params";
import { documentResponse } from "@/lib/reports/respond";

export const dynamic = "force-dynamic";

const query = periodReportQuery.extend({ granularity: z.enum(["week", "month"]).default("week") });

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const q = parseQuery(req, query);
  const now = Date.now();
  const report = await buildFleetHealth(ctx, { ...periodOf(q, now, 84), siteId: q.siteId, areaId: q.areaId, kind: q.kind, granularity: q.granularity, siteIds: ctx.siteIds ?? null }, now);
  if (q.format === "json") return NextResponse.json({ report });
  return documentResponse(fleetHealthDocument(report), q.format);
});

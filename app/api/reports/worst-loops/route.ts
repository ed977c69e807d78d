/**
 * GET /api/reports/worst-loops?from=YYYY-MM-DD&to=YYYY-MM-DD&siteId=&areaId=&kind=&format=json|csv|pdf —
 * loops ranked by the stated score over whole UTC days (default: the last 7), from the daily
 * summaries (viewer). The CSV holds the full ranking, the PDF the top 50.
 */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseQuery } from "@/lib/http";
import { periodOf, periodReportQuery } from "@/lib/reports/params";
import { documentResponse } from "@/lib/reports/respond";
import { buildWorstLoops } from "@/lib/reports/worst-loops";
import { worstLoopsDocument } from "@/lib/reports/worst-loops-document";

export const dynamic = "force-dynamic";

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const q = parseQuery(req, periodReportQuery);
  const now = Date.now();
  const report = await buildWorstLoops(ctx, { ...periodOf(q, now), siteId: q.siteId, areaId: q.areaId, kind: q.kind, siteIds: ctx.siteIds ?? null }, now);
  if (q.format === "json") return NextResponse.json({ report });
  return documentResponse(worstLoopsDocument(report, q.format === "pdf" ? { limit: 50 } : {}), q.format);
});

/**
 * GET /api/reports/handover?siteId=&areaId=&shift=<ISO start>&format=json|csv|pdf — the handover of a
 * site's shift (or of one of its areas: that area's loops, alarms and notes) (default: the last shift that has ended), available from the shift's end; `shift=current`
 * previews the running shift as of now (viewer).
 */
import { NextResponse } from "next/server";
import { z } from "zod";
import { isoTime, handle, parseQuery } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { buildHandover, resolveShift, siteShiftInfo } from "@/lib/reports/handover";
import { handoverDocument } from "@/lib/reports/document";
import { documentResponse } from "@/lib/reports/respond";

export const dynamic = "force-dynamic";

const query = z
  .object({
    siteId: z.coerce.number().int().positive(),
    areaId: z.coerce.number().int().positive().optional(),
    shift: z.union([z.literal("current"), isoTime]).optional(),
    format: z.enum(["json", "csv", "pdf"]).default("json"),
  })
  .strict();

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const q = parseQuery(req, query);
  const site = await siteShiftInfo(ctx, q.siteId, q.areaId ?? null);
  const now = Date.now();
  const handover = await buildHandover(ctx, site, resolveShift(site, q.shift, now), now);
  if (q.format === "json") return NextResponse.json({ handover });
  return documentResponse(handoverDocument(handover), q.format);
});

/** POST /api/reports/handover/confirm {siteId, shift: ISO start} — the caller has read the handover (operator). */
import { NextResponse } from "next/server";
import { z } from "zod";
import { isoTime, handle, parseBody } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { confirmHandover, resolveShift, siteShiftInfo } from "@/lib/reports/handover";

export const dynamic = "force-dynamic";

const body = z.object({ siteId: z.coerce.number().int().positive(), shift: isoTime }).strict();

export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("operator");
  const b = await parseBody(req, body);
  const site = await siteShiftInfo(ctx, b.siteId);
  const now = Date.now();
  const confirmation = await confirmHandover(ctx, site, resolveShift(site, b.shift, now), now);
  return NextResponse.json({ confirmation }, { status: 201 });
});

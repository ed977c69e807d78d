/** GET /api/sites/[siteId] — one site of the caller's tenant (404 for another tenant's id). */
import { NextResponse } from "next/server";
import { z } from "zod";
import { requireContext } from "@/lib/auth/guard";
import { getSite } from "@/lib/data/admin/sites";
import { handle } from "@/lib/http";

const paramsSchema = z.object({ siteId: z.coerce.number().int().positive() });

export const GET = handle(async (_req: Request, { params }: { params: Promise<{ siteId: string }> }) => {
  const ctx = await requireContext("viewer");
  const { siteId } = paramsSchema.parse(await params);
  return NextResponse.json(await getSite(ctx, siteId));
});

/** GET /api/sites/[siteId] — one site of the caller's tenant (404 for another tenant's id). */
import { NextResponse } from "next/server";
import { z } from "zod";
import { requireContext } from "@/lib/auth/guard";
import { getDb } from "@/lib/data/db/sequelize";
import { handle } from "@/lib/http";
import { assertSiteVisible, findOwnedOrThrow } from "@/lib/data/tenancy";

const paramsSchema = z.object({ siteId: z.coerce.number().int().positive() });

export const GET = handle(async (_req: Request, { params }: { params: Promise<{ siteId: string }> }) => {
  const ctx = await requireContext("viewer");
  const { siteId } = paramsSchema.parse(await params);
  assertSiteVisible(ctx, siteId, "Site");
  const site = await findOwnedOrThrow(getDb().models.Site, ctx, siteId, "Site");
  return NextResponse.json({ id: site.id, slug: site.slug, name: site.name, timeZone: site.timeZone });
});

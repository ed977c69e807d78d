/**
 * GET /api/admin/sites/[siteId]/shifts — the site's time zone and shift starts (viewer);
 * PUT {timeZone, shiftStarts: ["06:00", ...], reason} — change them, logged (admin).
 */
import { NextResponse } from "next/server";
import { listSiteShifts, setSiteShifts, siteShiftsSchema } from "@/lib/admin/site-shifts";
import { requireContext } from "@/lib/auth/guard";
import { NotFoundError } from "@/lib/domain/errors";
import { handle, parseBody, parseId } from "@/lib/http";

export const dynamic = "force-dynamic";

export const GET = handle(async (_req: Request, { params }: { params: Promise<{ siteId: string }> }) => {
  const ctx = await requireContext("viewer");
  const id = parseId((await params).siteId, "site id");
  const site = (await listSiteShifts(ctx)).find((s) => s.siteId === id);
  if (!site) throw new NotFoundError("Site");
  return NextResponse.json({ site });
});

export const PUT = handle(async (req: Request, { params }: { params: Promise<{ siteId: string }> }) => {
  const ctx = await requireContext("admin");
  const id = parseId((await params).siteId, "site id");
  return NextResponse.json({ site: await setSiteShifts(ctx, id, await parseBody(req, siteShiftsSchema)) });
});

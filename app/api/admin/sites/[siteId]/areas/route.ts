import { NextResponse } from "next/server";
import { idParam } from "@/lib/admin/route-helpers";
import { areaSchema, createArea } from "@/lib/data/admin/sites";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

/** Add an operator area to a site: `{ name, reason? }`. */
export const POST = handle(async (req: Request, { params }: { params: Promise<{ siteId: string }> }) => {
  const ctx = await requireContext("admin");
  const siteId = idParam((await params).siteId, "siteId");
  const body = await parseBody(req, areaSchema);
  return NextResponse.json({ area: await createArea(ctx, siteId, body) }, { status: 201 });
});

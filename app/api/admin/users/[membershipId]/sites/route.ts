/** PUT /api/admin/users/[membershipId]/sites {siteIds, reason} — limit a member to some sites; [] lifts the limit (admin). */
import { NextResponse } from "next/server";
import { setMembershipSites, membershipSitesSchema } from "@/lib/data/admin/membership-sites";
import { parseId, handle, parseBody } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";

export const dynamic = "force-dynamic";

export const PUT = handle(async (req: Request, { params }: { params: Promise<{ membershipId: string }> }) => {
  const ctx = await requireContext("admin");
  const id = parseId((await params).membershipId, "membership id");
  return NextResponse.json(await setMembershipSites(ctx, id, await parseBody(req, membershipSitesSchema)));
});

import { NextResponse } from "next/server";
import { createSite, listSites, siteSchema } from "@/lib/data/admin/sites";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseBody } from "@/lib/http";

export const dynamic = "force-dynamic";

/** Sites with their operator areas; every role may read them (forms and filters need them). */
export const GET = handle(async () => {
  const ctx = await requireContext("viewer");
  return NextResponse.json({ sites: await listSites(ctx) });
});

export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("admin");
  const body = await parseBody(req, siteSchema);
  return NextResponse.json({ site: await createSite(ctx, body) }, { status: 201 });
});

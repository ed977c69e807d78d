/** GET /api/work-list?siteId=&status=active|open|in-work|closed|all — viewer: the tenant's work items and who can own them. */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { handle, parseQuery } from "@/lib/http";
import { listOwners, listWorkItems, workListQuerySchema } from "@/lib/work-list/queries";

export const dynamic = "force-dynamic";

export const GET = handle(async (req: Request) => {
  const ctx = await requireContext("viewer");
  const q = parseQuery(req, workListQuerySchema);
  const [items, owners] = await Promise.all([listWorkItems(ctx, q), listOwners(ctx)]);
  return NextResponse.json({ items, owners });
});

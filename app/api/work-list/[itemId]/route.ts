/**
 * GET   /api/work-list/:itemId — viewer: the item and its history.
 * PATCH /api/work-list/:itemId — engineer: { status?, ownerId?, note? } (closing needs a note); 409 when
 *   reopening an item whose finding has a newer open item.
 */
import { NextResponse } from "next/server";
import { parseId, handle, parseBody } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { getWorkItem, updateWorkItem, workItemPatchSchema } from "@/lib/work-list/queries";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ itemId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  return NextResponse.json(await getWorkItem(ctx, parseId((await params).itemId, "item id")));
});

export const PATCH = handle(async (req: Request, { params }: Params) => {
  const ctx = await requireContext("engineer");
  const id = parseId((await params).itemId, "item id");
  const patch = await parseBody(req, workItemPatchSchema);
  return NextResponse.json(await updateWorkItem(ctx, id, patch));
});

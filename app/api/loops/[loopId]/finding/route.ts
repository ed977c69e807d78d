/** GET /api/loops/:loopId/finding — viewer: the loop's latest routine-data finding and its full assessment (both null before the first). */
import { NextResponse } from "next/server";
import { parseId, handle } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { loopFinding } from "@/lib/work-list/findings";

export const dynamic = "force-dynamic";

type Params = { params: Promise<{ loopId: string }> };

export const GET = handle(async (_req: Request, { params }: Params) => {
  const ctx = await requireContext("viewer");
  return NextResponse.json(await loopFinding(ctx, parseId((await params).loopId, "loop id")));
});

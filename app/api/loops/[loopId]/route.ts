/** GET /api/loops/[loopId] — one loop with configuration and live state (viewer). PATCH edits it (engineer). */
import { NextResponse } from "next/server";
import { updateLoopHandler } from "@/lib/admin/loop-routes";
import { requireContext } from "@/lib/auth/guard";
import { NotFoundError } from "@/lib/domain/errors";
import { handle } from "@/lib/http";
import { getLoop, loopIdSchema } from "@/lib/data/loops";

export const dynamic = "force-dynamic";

export const GET = handle(async (_req: Request, { params }: { params: Promise<{ loopId: string }> }) => {
  const ctx = await requireContext("viewer");
  const id = loopIdSchema.parse((await params).loopId);
  const loop = await getLoop(ctx, id);
  if (!loop) throw new NotFoundError("Loop");
  return NextResponse.json({ loop });
});

export const PATCH = updateLoopHandler;

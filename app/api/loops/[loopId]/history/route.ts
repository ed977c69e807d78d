/** GET /api/loops/[loopId]/history?from&to&maxPoints&tier&shape — down-sampled history and pole snapshots (viewer); shape=columns answers one array per statistic. */
import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { NotFoundError } from "@/lib/domain/errors";
import { handle, parseQuery } from "@/lib/http";
import { getLoopHistory, historySchema, loopIdSchema } from "@/lib/data/loops";

export const dynamic = "force-dynamic";

export const GET = handle(async (req: Request, { params }: { params: Promise<{ loopId: string }> }) => {
  const ctx = await requireContext("viewer");
  const id = loopIdSchema.parse((await params).loopId);
  const q = parseQuery(req, historySchema);
  const history = await getLoopHistory(ctx, id, q.from, q.to, q.maxPoints, { tier: q.tier, shape: q.shape });
  if (!history) throw new NotFoundError("Loop");
  return NextResponse.json(history);
});

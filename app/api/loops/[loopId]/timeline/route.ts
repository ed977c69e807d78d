/** GET /api/loops/[loopId]/timeline?from=&to= — events, acknowledgements, notes, changes and state changes, newest first (viewer). */
import { NextResponse } from "next/server";
import { z } from "zod";
import { isoTime, handle, parseQuery } from "@/lib/http";
import { requireContext } from "@/lib/auth/guard";
import { NotFoundError } from "@/lib/domain/errors";
import { getLoop, loopIdSchema } from "@/lib/data/loops";
import { loopTimeline } from "@/lib/reports/timeline";

export const dynamic = "force-dynamic";

const DAY = 24 * 3600_000;
const query = z.object({ from: isoTime.optional(), to: isoTime.optional(), limit: z.coerce.number().int().min(1).max(2000).optional() }).strict();

export const GET = handle(async (req: Request, { params }: { params: Promise<{ loopId: string }> }) => {
  const ctx = await requireContext("viewer");
  const loopId = loopIdSchema.parse((await params).loopId);
  const q = parseQuery(req, query);
  if (!(await getLoop(ctx, loopId))) throw new NotFoundError("Loop");
  const to = q.to ?? Date.now();
  const from = q.from ?? to - 7 * DAY;
  if (!(from < to)) throw new z.ZodError([{ code: "custom", path: ["from"], message: "`from` must be before `to`", input: q.from }]);
  const items = await loopTimeline(ctx, loopId, from, to, q.limit ?? 500);
  return NextResponse.json({ from: new Date(from).toISOString(), to: new Date(to).toISOString(), items });
});

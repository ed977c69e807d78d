import { NextResponse } from "next/server";
import { idParam, reasonSchema } from "@/lib/admin/route-helpers";
import { requireContext } from "@/lib/auth/guard";
import { deleteSparkplugMapping } from "@/lib/data/sparkplug";
import { handle, parseBody } from "@/lib/http";
import { runningService } from "@/lib/data/server-context";

/** Remove a loop's Sparkplug mapping: `{ reason }` (logged). */
export const DELETE = handle(async (req: Request, { params }: { params: Promise<{ loopId: string }> }) => {
  const ctx = await requireContext("admin");
  const loopId = idParam((await params).loopId, "loopId");
  const { reason } = await parseBody(req, reasonSchema);
  await deleteSparkplugMapping(ctx, loopId, reason);
  await runningService("pipeline")?.reloadSparkplug?.();
  return NextResponse.json({ ok: true });
});

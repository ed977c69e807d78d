import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { saveSparkplugMapping } from "@/lib/data/sparkplug";
import { mappingSchema } from "@/lib/domain/sparkplug";
import { handle, parseBody } from "@/lib/http";
import { runningService } from "@/lib/data/server-context";

/**
 * Map a device's metrics to a loop's SP, PV, MV and mode: `{ loopId, groupId, edgeNode, device,
 * sp, pv, mv, mode, reason? }`, checked against the device's last birth (422 per field), logged.
 */
export const PUT = handle(async (req: Request) => {
  const ctx = await requireContext("admin");
  const body = await parseBody(req, mappingSchema);
  const mapping = await saveSparkplugMapping(ctx, body);
  await runningService("pipeline")?.reloadSparkplug?.();
  return NextResponse.json({ mapping });
});

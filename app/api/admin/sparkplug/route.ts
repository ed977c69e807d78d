import { NextResponse } from "next/server";
import { requireContext } from "@/lib/auth/guard";
import { bindSparkplugGroup, sparkplugOverview } from "@/lib/data/sparkplug";
import { bindGroupSchema } from "@/lib/domain/sparkplug";
import { handle, parseBody } from "@/lib/http";
import { runningService } from "@/lib/data/server-context";

export const dynamic = "force-dynamic";

/** The tenant's Sparkplug B group ids, the edge nodes and devices seen (last birth, rebirth needed) and the loop mappings. */
export const GET = handle(async () => {
  const ctx = await requireContext("admin");
  return NextResponse.json(await sparkplugOverview(ctx));
});

/** Bind a Sparkplug group id to the tenant: `{ groupId, reason? }` (409 when it is taken). */
export const POST = handle(async (req: Request) => {
  const ctx = await requireContext("admin");
  const body = await parseBody(req, bindGroupSchema);
  await bindSparkplugGroup(ctx, body);
  await runningService("pipeline")?.reloadSparkplug?.();
  return NextResponse.json({ ok: true }, { status: 201 });
});

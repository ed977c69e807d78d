import { bindSparkplugGroup, sparkplugOverview } from "@/lib/data/sparkplug";
import { bindGroupSchema } from "@/lib/domain/sparkplug";
import { createRoute, readRoute } from "@/lib/auth/json-route";
import { runningService } from "@/lib/data/server-context";

export const dynamic = "force-dynamic";

/** The tenant's Sparkplug B group ids, the edge nodes and devices seen (last birth, rebirth needed) and the loop mappings. */
export const GET = readRoute("admin", sparkplugOverview);

/** Bind a Sparkplug group id to the tenant: `{ groupId, reason? }` (409 when it is taken). */
export const POST = createRoute("admin", bindGroupSchema, async (ctx, body) => {
  await bindSparkplugGroup(ctx, body);
  await runningService("pipeline")?.reloadSparkplug?.();
  return { ok: true };
});

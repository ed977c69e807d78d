/** POST /api/alarms/[alarmId]/out-of-service { reason } — engineer or higher. */
import { z } from "zod";
import { text } from "@/lib/text-input";
import { alarmActionRoute } from "@/lib/data/alarms/action-route";

export const dynamic = "force-dynamic";

export const POST = alarmActionRoute({
  role: "engineer",
  body: z.object({ reason: text().trim().min(1, "a reason is required").max(1000) }),
  act: (api, ctx, id, b) => api.removeFromService(ctx, id, b.reason),
});

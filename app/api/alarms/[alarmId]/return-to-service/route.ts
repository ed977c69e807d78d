/** POST /api/alarms/[alarmId]/return-to-service { comment? } — engineer or higher. */
import { alarmActionRoute, commentBody } from "@/lib/data/alarms/action-route";

export const dynamic = "force-dynamic";

export const POST = alarmActionRoute({
  role: "engineer",
  body: commentBody,
  optionalBody: true,
  act: (api, ctx, id, b) => api.returnToService(ctx, id, b.comment ?? null),
});

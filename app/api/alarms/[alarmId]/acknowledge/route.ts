/** POST /api/alarms/[alarmId]/acknowledge { comment } — operator or higher; a comment is required for an urgent alarm. */
import { alarmActionRoute, commentBody } from "@/lib/data/alarms/action-route";

export const dynamic = "force-dynamic";

export const POST = alarmActionRoute({
  role: "operator",
  body: commentBody,
  act: (api, ctx, id, b) => api.acknowledge(ctx, id, b.comment ?? null),
});

/** POST /api/alarms/[alarmId]/unshelve { comment? } — operator or higher; a still-active alarm is announced again. */
import { alarmActionRoute, commentBody } from "@/lib/data/alarms/action-route";

export const dynamic = "force-dynamic";

export const POST = alarmActionRoute({
  role: "operator",
  body: commentBody,
  optionalBody: true,
  act: (api, ctx, id, b) => api.unshelve(ctx, id, b.comment ?? null),
});

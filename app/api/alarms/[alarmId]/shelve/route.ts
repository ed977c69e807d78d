/** POST /api/alarms/[alarmId]/shelve { minutes, reason } — operator or higher; time-limited by the alarm policy. */
import { z } from "zod";
import { text } from "@/lib/text-input";
import { alarmActionRoute } from "@/lib/data/alarms/action-route";

export const dynamic = "force-dynamic";

export const POST = alarmActionRoute({
  role: "operator",
  body: z.object({ minutes: z.number().positive(), reason: text().trim().min(1, "a reason is required").max(1000) }),
  act: (api, ctx, id, b) => api.shelve(ctx, id, b.minutes, b.reason),
});

/**
 * The POST handler of one action on one alarm (acknowledge, shelve, unshelve, out of service,
 * return to service): the role guard, the alarm id, the tenant and site scope of the alarm, the
 * body, then the running alarm service's action; the answer is `{ alarm }`.
 */
import { NextResponse } from "next/server";
import { z } from "zod";
import { requireContext } from "@/lib/auth/guard";
import type { AlarmDto } from "@/lib/domain/types";
import type { Role, TenantContext } from "@/lib/domain/types";
import { handle, parseBody, parseId, parseOptionalBody } from "@/lib/http";
import { text } from "@/lib/text-input";
import { alarmApi, type AlarmApi } from "@/lib/data/server-context";
import { assertAlarmVisible } from "@/lib/data/alarms/scope";

/** The body of the actions that take only an optional comment (acknowledge, unshelve, return to service). */
export const commentBody = z.object({ comment: text().max(1000).nullish() });

export interface AlarmAction<T extends z.ZodType> {
  /** The least role that may take the action. */
  role: Role;
  body: T;
  /** True when every field is optional, so an empty body counts as `{}`. */
  optionalBody?: boolean;
  act: (api: AlarmApi, ctx: TenantContext, alarmId: number, body: z.infer<T>) => AlarmDto;
}

export function alarmActionRoute<T extends z.ZodType>(action: AlarmAction<T>) {
  return handle(async (req: Request, { params }: { params: Promise<{ alarmId: string }> }) => {
    const ctx = await requireContext(action.role);
    const id = parseId((await params).alarmId, "alarm id");
    await assertAlarmVisible(ctx, id);
    const b = action.optionalBody ? await parseOptionalBody(req, action.body) : await parseBody(req, action.body);
    return NextResponse.json({ alarm: action.act(alarmApi(), ctx, id, b) });
  });
}

/**
 * How route handlers reach the running alarm and mail services: through the server context on
 * globalThis (lib/server-context.ts), never by importing server/ code (Next bundles route handlers
 * apart from the custom server); their interfaces are lib/domain/services.ts.
 */
import { z } from "zod";
import { HttpError, ValidationError } from "@/lib/domain/errors";
import type { AlarmApi as AlarmServiceApi, MailApi } from "@/lib/domain/services";
import { runningService } from "@/lib/server-context";

export type AlarmApi = Pick<
  AlarmServiceApi,
  "list" | "get" | "detail" | "acknowledge" | "shelve" | "unshelve" | "removeFromService" | "returnToService" | "kpis" | "getPolicy" | "putPolicy"
>;

/** The running alarm service, or a 503 when this process runs without it. */
export function alarmApi(): AlarmApi {
  const svc = runningService("alarms");
  if (!svc || typeof svc.acknowledge !== "function") throw new HttpError(503, "The alarm service is not running.");
  return svc;
}

/** The running mail service (its outbox), or a 503. */
export function mailApi(): Pick<MailApi, "outbox" | "outboxFor" | "sinkPort"> {
  const svc = runningService("mail");
  if (!svc || typeof svc.outboxFor !== "function") throw new HttpError(503, "The mail service is not running.");
  return svc;
}

const idSchema = z.coerce.number().int().positive();

/** Parse a numeric id from a route segment (422 on anything else). */
export function parseId(raw: string | undefined, what = "id"): number {
  const r = idSchema.safeParse(raw);
  if (!r.success) throw new ValidationError(`The ${what} must be a positive whole number.`);
  return r.data;
}

/** ISO 8601 date-time (with Z or an offset) to epoch ms. */
export const isoTime = z.iso.datetime({ offset: true }).transform((s) => Date.parse(s));

/** Like parseBody, but an empty body counts as `{}` (actions whose fields are all optional). */
export async function parseOptionalBody<T extends z.ZodType>(req: Request, schema: T): Promise<z.infer<T>> {
  const text = await req.text();
  let raw: unknown = {};
  if (text.trim()) {
    try {
      raw = JSON.parse(text) as unknown;
    } catch {
      throw new ValidationError("The request body must be JSON.");
    }
  }
  return schema.parse(raw);
}

/**
 * The alarm service entry point for server/services.ts. Route handlers reach the running
 * instance through `alarmService()` (the server context lives on globalThis, lib/server-context.ts).
 */
import { getDb } from "@/lib/db/sequelize";
import { getServerContext } from "@/lib/server-context";
import { HttpError } from "@/lib/errors";
import type { ServerContext } from "@/server/context";
import { AlarmService, type AlarmServiceOptions } from "./service";

export { AlarmService, JournalFullHttpError, type AlarmListFilter } from "./service";

export async function startAlarms(ctx: ServerContext, opts: Partial<AlarmServiceOptions> = {}): Promise<AlarmService> {
  return AlarmService.start(ctx, { sequelize: opts.sequelize ?? getDb(ctx.config).sequelize, ...opts });
}

/** The running alarm service, or a 503 when the server runs without it. */
export function alarmService(): AlarmService {
  // Duck-typed: Next bundles route handlers apart from the server, so the class may exist twice.
  const svc = getServerContext()?.services.get("alarms") as AlarmService | undefined;
  if (!svc || typeof svc.acknowledge !== "function") throw new HttpError(503, "The alarm service is not running.");
  return svc;
}

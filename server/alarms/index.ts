/**
 * The alarm service entry point for server/services.ts. Route handlers reach the running
 * instance through `alarmService()` (the server context lives on globalThis, lib/server-context.ts).
 */
import os from "node:os";
import path from "node:path";
import { getDb } from "@/lib/db/sequelize";
import { getServerContext } from "@/lib/server-context";
import { HttpError } from "@/lib/errors";
import type { ServerContext } from "@/server/context";
import { AlarmService, type AlarmServiceOptions } from "./service";

export { AlarmService, JournalFullHttpError, type AlarmListFilter } from "./service";

export async function startAlarms(ctx: ServerContext, opts: Partial<AlarmServiceOptions> = {}): Promise<AlarmService> {
  // Under test several servers may run at once: one journal per process unless a path is set.
  const journalPath =
    opts.journalPath ??
    (ctx.config.NODE_ENV === "test" && !process.env.ALARM_JOURNAL_PATH
      ? path.join(os.tmpdir(), `rg-alarm-journal-${process.pid}.ndjson`)
      : ctx.config.ALARM_JOURNAL_PATH);
  return AlarmService.start(ctx, { ...opts, sequelize: opts.sequelize ?? getDb(ctx.config).sequelize, journalPath });
}

/** The running alarm service, or a 503 when the server runs without it. */
export function alarmService(): AlarmService {
  // Duck-typed: Next bundles route handlers apart from the server, so the class may exist twice.
  const svc = getServerContext()?.services.get("alarms") as AlarmService | undefined;
  if (!svc || typeof svc.acknowledge !== "function") throw new HttpError(503, "The alarm service is not running.");
  return svc;
}

/**
 * The alarm service entry point for server/services.ts. Route handlers reach the running
 * instance through `alarmApi()` (lib/data/server-context.ts; its interface is lib/domain/services.ts).
 */
import os from "node:os";
import path from "node:path";
import { getDb } from "@/lib/data/db/sequelize";
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

/**
 * The one list of long-running services the custom server starts, in start order (shutdown runs
 * in reverse). Each entry names a module and the start function it exports; a module that does
 * not exist yet is skipped with a log line, so the list can name services before they land.
 * Every start function takes the ServerContext and returns a `Service` (server/context.ts).
 */
import { existsSync } from "node:fs";
import { fileURLToPath, pathToFileURL } from "node:url";
import type { Config } from "@/lib/config";
import type { ServerContext, Service } from "./context";

export interface ServiceEntry {
  /** Name in logs and /api/health (the service's own `name` is used once it runs). */
  name: string;
  /** Module path relative to this folder, with extension. */
  module: string;
  /** The exported start function: `(ctx: ServerContext) => Promise<Service>`. */
  exportName: string;
  /** Whether to start it under this configuration (default: always). */
  enabled?: (cfg: Config, opts: StartServicesOptions) => boolean;
}

export interface StartServicesOptions {
  /** Start the plant simulators (npm start: config SIMULATORS; tests: false). */
  simulators?: boolean;
  /** Names to leave out (tests that need only part of the server). */
  skip?: readonly string[];
}

export const SERVICES: readonly ServiceEntry[] = [
  // Mail first: alarms send through it.
  { name: "mail", module: "mail/index.ts", exportName: "startMail" },
  // Object storage for uploaded step-test files (embedded S3 stand-in unless S3_ENDPOINT is set).
  { name: "objectstore", module: "objectstore/index.ts", exportName: "startObjectStore" },
  // Alarms before the pipeline so no tracker update is missed.
  { name: "alarms", module: "alarms/index.ts", exportName: "startAlarms" },
  // Report delivery and the daily loop summaries (sends through mail).
  { name: "reports", module: "reports/index.ts", exportName: "startReports" },
  // The pipeline wires broker -> ingest -> trackers -> history + realtime emitting.
  { name: "pipeline", module: "pipeline.ts", exportName: "startPipeline" },
  {
    name: "simulators",
    module: "simulators-process.ts",
    exportName: "startSimulators",
    enabled: (cfg, opts) => opts.simulators ?? cfg.SIMULATORS,
  },
];

type StartFn = (ctx: ServerContext) => Promise<Service>;

/**
 * Start the registered services in order, registering each in `ctx.services`. If one fails to
 * start, the ones already running are stopped (reverse order) and the error is rethrown.
 */
export async function startServices(
  ctx: ServerContext,
  opts: StartServicesOptions = {},
  entries: readonly ServiceEntry[] = SERVICES,
): Promise<Service[]> {
  const started: Service[] = [];
  for (const entry of entries) {
    if (opts.skip?.includes(entry.name)) continue;
    if (entry.enabled && !entry.enabled(ctx.config, opts)) continue;
    const url = new URL(entry.module, import.meta.url);
    if (!existsSync(fileURLToPath(url))) {
      console.info(`[server] ${entry.name}: not present yet (server/${entry.module}), skipped`);
      continue;
    }
    try {
      const mod = (await import(pathToFileURL(fileURLToPath(url)).href)) as Record<string, unknown>;
      const start = mod[entry.exportName];
      if (typeof start !== "function") {
        console.warn(`[server] ${entry.name}: server/${entry.module} exports no ${entry.exportName}(), skipped`);
        continue;
      }
      const service = await (start as StartFn)(ctx);
      ctx.services.set(service.name, service);
      started.push(service);
    } catch (err) {
      console.error(`[server] ${entry.name} failed to start`, err);
      await stopServices(ctx, started);
      throw err;
    }
  }
  return started;
}

/** How long one service may take to stop before shutdown moves on without it. */
export const STOP_TIMEOUT_MS = 10_000;

/**
 * Stop services in reverse start order; one failing or hanging stop does not keep the others
 * running (each gets STOP_TIMEOUT_MS).
 */
export async function stopServices(ctx: ServerContext, services: Service[], log: (m: string) => void = () => {}): Promise<void> {
  for (const s of [...services].reverse()) {
    const t0 = Date.now();
    let timer: NodeJS.Timeout | undefined;
    try {
      const outcome = await Promise.race([
        s.stop().then(() => "stopped" as const),
        new Promise<"timeout">((resolve) => {
          timer = setTimeout(() => resolve("timeout"), STOP_TIMEOUT_MS);
          timer.unref();
        }),
      ]);
      if (outcome === "timeout") console.error(`[server] ${s.name} did not stop within ${STOP_TIMEOUT_MS} ms; moving on`);
      else log(`[server] ${s.name} stopped (${Date.now() - t0} ms)`);
    } catch (err) {
      console.error(`[server] ${s.name} did not stop cleanly`, err);
    } finally {
      if (timer) clearTimeout(timer);
    }
    ctx.services.delete(s.name);
  }
}

/**
 * `npm start`: everything a fresh checkout needs, in one process that Ctrl-C stops completely.
 *   1. load .env*, check the configuration;
 *   2. start (or reuse) the private MariaDB unless DB_EXTERNAL;
 *   3. build the Next app when .next/BUILD_ID is missing or older than the sources (production);
 *   4. apply migrations; seed the invented demo when the database has no tenant yet;
 *   5. print the URL and the demo accounts; run the server in this process.
 * On SIGINT/SIGTERM: the server stops (services, sockets, simulators), then the MariaDB this
 * command started. A second signal exits at once (still stopping MariaDB).
 * `npm run dev` runs the same with `--dev` (Next in development mode, no build).
 */
import { getConfig } from "@/lib/config";
import { loadEnv } from "@/lib/load-env";
import { prepareDatabase } from "@/scripts/db-bootstrap";
import { stopMariaDb } from "@/scripts/mariadb-server";
import { closeSequelize } from "@/lib/data/db/sequelize";
import { REPO_ROOT, startServer } from "@/server/index";
import { buildState, runNextBuild } from "@/server/next-build";

const dev = process.argv.includes("--dev");
(process.env as Record<string, string>).NODE_ENV = dev ? "development" : "production";
process.env.NEXT_TELEMETRY_DISABLED = "1";

const log = (m: string) => console.log(`[start] ${m}`);

async function printWelcome(url: string): Promise<void> {
  const { DEMO_ACCOUNTS, DEMO_PASSWORD } = await import("@/lib/data/seed");
  const rows = DEMO_ACCOUNTS.map((a) => [a.email, a.name, a.tenant, a.role]);
  const head = ["e-mail", "name", "tenant", "role"];
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)));
  const line = (cells: string[]) => "  " + cells.map((c, i) => c.padEnd(widths[i]!)).join("   ");
  console.log("");
  console.log(`  Rimguard is running at ${url}`);
  console.log("");
  console.log(`  Demo accounts (invented; password for all: ${DEMO_PASSWORD})`);
  console.log(line(head));
  console.log(line(widths.map((w) => "-".repeat(w))));
  for (const r of rows) console.log(line(r));
  console.log("");
  console.log("  Advisory monitoring only — not a safety system. Rimguard never writes to a controller.");
  console.log("  Press Ctrl-C to stop (the database started by this command stops too).");
  console.log("");
}

async function main(): Promise<void> {
  loadEnv(REPO_ROOT, dev);
  const cfg = getConfig();
  let startedDb: string | null = null;
  let stopServer: (() => Promise<void>) | null = null;

  const stopDb = async () => {
    await closeSequelize().catch(() => undefined);
    if (startedDb) {
      const dir = startedDb;
      startedDb = null;
      log("stopping MariaDB");
      await stopMariaDb(dir).catch((e: unknown) => log(`MariaDB did not stop cleanly: ${String(e)}`));
    }
  };

  let signalled = 0;
  const onSignal = (sig: NodeJS.Signals) => {
    // npm forwards the terminal's Ctrl-C to us as well, so one keypress can arrive twice within
    // a few milliseconds: only a signal a second or more after the first forces the exit.
    if (signalled && Date.now() - signalled < 1_000) return;
    if (signalled) {
      log(`${sig} again: exiting now`);
      if (startedDb) void stopMariaDb(startedDb);
      setTimeout(() => process.exit(1), 200).unref();
      return;
    }
    signalled = Date.now();
    log(`${sig}: shutting down (press again to force)`);
    (async () => {
      if (stopServer) await stopServer();
      await stopDb();
    })().then(
      () => process.exit(0),
      (e: unknown) => {
        console.error(e);
        process.exit(1);
      },
    );
  };

  try {
    log(cfg.DB_EXTERNAL ? `using the external MariaDB at ${cfg.DB_HOST}:${cfg.DB_PORT}` : "starting MariaDB");
    const ready = await prepareDatabase({ seed: false, cfg, log });
    if (ready.server && !ready.server.reused) startedDb = ready.server.dataDir;
    process.on("SIGINT", onSignal);
    process.on("SIGTERM", onSignal);

    if ((await ready.models.Tenant.count()) === 0) {
      log("empty database: writing the invented demo scenario");
      await prepareDatabase({ seed: true, cfg, log });
    }

    if (!dev) {
      const b = buildState(REPO_ROOT);
      if (b.stale) {
        log(`building the web app (${b.why}); this takes a minute or two`);
        await runNextBuild(REPO_ROOT);
      }
    }
    if (signalled) return;

    const running = await startServer({ dev });
    stopServer = running.stop;
    await printWelcome(running.url);
  } catch (e) {
    console.error(`[start] ${e instanceof Error ? e.message : String(e)}`);
    await stopDb();
    process.exit(1);
  }
}

void main();

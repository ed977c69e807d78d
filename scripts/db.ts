/**
 * Database commands (npm run db:<cmd>):
 *   start    start (or reuse) the private MariaDB under DB_DATA_DIR, create the database and user
 *   stop     stop it (works from any process, through its pid file)
 *   migrate  start if needed, then apply pending migrations
 *   seed     start if needed, migrate, then write the invented demo data (idempotent)
 *   status   applied and pending migrations
 *   down     revert the last migration (or all with --all) — development only
 */
import { getConfig } from "@/lib/config";
import { prepareDatabase, startDatabaseServer, stopDatabaseServer } from "@/scripts/db-bootstrap";
import { migrateDown, migrationStatus } from "@/lib/data/db/migrate";
import { closeSequelize, getSequelize } from "@/lib/data/db/sequelize";
import { loadEnv } from "@/lib/load-env";

const log = (m: string) => console.log(`[db] ${m}`);

async function main(cmd: string | undefined, args: string[]): Promise<void> {
  loadEnv();
  const cfg = getConfig();
  switch (cmd) {
    case "start": {
      const h = await startDatabaseServer(cfg, log);
      if (!h) log(`DB_EXTERNAL=true: using ${cfg.DB_HOST}:${cfg.DB_PORT}, nothing to start.`);
      else log(`${h.reused ? "Already running" : "Started"}: 127.0.0.1:${h.port} (socket ${h.socket}), data in ${cfg.DB_DATA_DIR}, database ${cfg.DB_NAME}, user ${cfg.DB_USER}. Stop with npm run db:stop.`);
      return;
    }
    case "stop": {
      if (cfg.DB_EXTERNAL) return log("DB_EXTERNAL=true: nothing to stop.");
      log((await stopDatabaseServer(cfg)) ? "Stopped." : "Not running.");
      return;
    }
    case "migrate":
    case "seed": {
      const r = await prepareDatabase({ seed: cmd === "seed", cfg, log });
      log(r.migrationsApplied.length ? `Migrations applied: ${r.migrationsApplied.length}.` : "Schema up to date.");
      if (r.seeded) {
        const made = Object.entries(r.seeded).filter(([, n]) => n > 0);
        log(made.length ? `Demo data created: ${made.map(([t, n]) => `${t} ${n}`).join(", ")}.` : "Demo data already present.");
      }
      return;
    }
    case "status": {
      await startDatabaseServer(cfg, log);
      const s = await migrationStatus(getSequelize(cfg));
      log(`applied: ${s.executed.join(", ") || "(none)"}`);
      log(`pending: ${s.pending.join(", ") || "(none)"}`);
      return;
    }
    case "down": {
      await startDatabaseServer(cfg, log);
      const sequelize = getSequelize(cfg);
      const { executed } = await migrationStatus(sequelize);
      const last = executed[executed.length - 1];
      if (!last) return log("Nothing to revert.");
      const reverted = await migrateDown(sequelize, args.includes("--all") ? undefined : last);
      log(`Reverted: ${reverted.join(", ")}`);
      return;
    }
    default:
      throw new Error(`Unknown command "${cmd ?? ""}". Use one of: start, stop, migrate, seed, status, down [--all].`);
  }
}

main(process.argv[2], process.argv.slice(3))
  .then(() => closeSequelize())
  .catch(async (e: unknown) => {
    console.error(`[db] ${e instanceof Error ? e.message : String(e)}`);
    await closeSequelize().catch(() => {});
    process.exitCode = 1;
  });

/**
 * One call for a process that needs the database ready: start (or reuse) the private MariaDB
 * unless DB_EXTERNAL, connect, apply pending migrations, optionally seed the demo, and prepare
 * the history partitions for the next days. Used by scripts/db.ts and the start command.
 */
import type { Sequelize } from "sequelize";
import type { Config } from "@/lib/config";
import { getConfig } from "@/lib/config";
import type { Models } from "@/models";
import { ensureMariaDb, stopMariaDb, type MariaDbHandle } from "./mariadb-server";
import { migrateUp } from "@/lib/data/db/migrate";
import { maintainHistoryPartitions } from "@/lib/data/db/partitions";
import { getDb } from "@/lib/data/db/sequelize";

export interface DatabaseReady {
  sequelize: Sequelize;
  models: Models;
  /** The private server (null with DB_EXTERNAL). */
  server: MariaDbHandle | null;
  migrationsApplied: string[];
  seeded: Record<string, number> | null;
}

/** Start or reuse the private server from config (no-op with DB_EXTERNAL). */
export async function startDatabaseServer(cfg: Config = getConfig(), log: (m: string) => void = () => {}): Promise<MariaDbHandle | null> {
  if (cfg.DB_EXTERNAL) return null;
  if (cfg.DB_HOST !== "127.0.0.1" && cfg.DB_HOST !== "localhost") {
    throw new Error(`DB_HOST is ${cfg.DB_HOST}: the private MariaDB listens on 127.0.0.1 only; set DB_EXTERNAL=true for a remote server.`);
  }
  return ensureMariaDb({
    dataDir: cfg.DB_DATA_DIR,
    port: cfg.DB_PORT,
    database: cfg.DB_NAME,
    user: cfg.DB_USER,
    password: cfg.DB_PASSWORD,
    allowApt: cfg.DB_ALLOW_APT,
    log,
  });
}

/** Stop the private server of this configuration (from any process). */
export function stopDatabaseServer(cfg: Config = getConfig()): Promise<boolean> {
  return stopMariaDb(cfg.DB_DATA_DIR);
}

export async function prepareDatabase(
  opts: { seed?: boolean; cfg?: Config; log?: (m: string) => void } = {},
): Promise<DatabaseReady> {
  const cfg = opts.cfg ?? getConfig();
  const log = opts.log ?? (() => {});
  const server = await startDatabaseServer(cfg, log);
  const { sequelize, models } = getDb(cfg);
  const migrationsApplied = await migrateUp(sequelize);
  if (migrationsApplied.length) log(`Applied migrations: ${migrationsApplied.join(", ")}`);
  let seeded: Record<string, number> | null = null;
  if (opts.seed) {
    const { seedDemo } = await import("@/lib/data/seed");
    seeded = (await seedDemo(sequelize, { models, devicePepper: cfg.DEVICE_SECRET_PEPPER })).created;
  }
  await maintainHistoryPartitions(sequelize, {
    secondRetentionH: cfg.HISTORY_SECOND_RETENTION_H,
    minuteRetentionD: cfg.HISTORY_MINUTE_RETENTION_D,
  });
  return { sequelize, models, server, migrationsApplied, seeded };
}

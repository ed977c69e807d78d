/**
 * The Sequelize connection. One instance per process (`getSequelize()`), built from the typed
 * config; tests build their own with `createSequelize()` against a throw-away database.
 * Times are stored in UTC (timezone '+00:00'); column names are snake_case (`underscored`).
 */
import { Sequelize, type Options } from "sequelize";
import { getConfig, type Config } from "@/lib/config";
import { initModels, type Models } from "@/models";

export interface SequelizeOptions {
  host?: string;
  port?: number;
  /** Connect through a UNIX socket instead of TCP. */
  socket?: string;
  database: string;
  user: string;
  password?: string;
  /** Connection pool size (default 10: a small machine, a few concurrent services). */
  poolMax?: number;
  logging?: Options["logging"];
}

/** A new Sequelize instance for MariaDB with Rimguard's conventions (models not yet initialised). */
export function createSequelize(opts: SequelizeOptions): Sequelize {
  return new Sequelize(opts.database, opts.user, opts.password ?? "", {
    dialect: "mariadb",
    host: opts.socket ? undefined : (opts.host ?? "127.0.0.1"),
    port: opts.socket ? undefined : opts.port,
    dialectOptions: {
      ...(opts.socket ? { socketPath: opts.socket } : {}),
      connectTimeout: 10_000,
      // BIGINT epoch-ms columns come back as JS numbers (safe below 2^53).
      bigIntAsNumber: true,
      decimalAsNumber: true,
      insertIdAsNumber: true,
    },
    timezone: "+00:00",
    logging: opts.logging ?? false,
    define: { underscored: true },
    pool: { max: opts.poolMax ?? 10, min: 0, idle: 10_000, acquire: 30_000 },
  });
}

let shared: { sequelize: Sequelize; models: Models } | null = null;

/** The process-wide connection, built from config on first use, with models initialised. */
export function getSequelize(cfg: Config = getConfig()): Sequelize {
  return getDb(cfg).sequelize;
}

/** The process-wide connection together with its initialised models. */
export function getDb(cfg: Config = getConfig()): { sequelize: Sequelize; models: Models } {
  if (!shared) {
    const sequelize = createSequelize({
      host: cfg.DB_HOST,
      port: cfg.DB_PORT,
      database: cfg.DB_NAME,
      user: cfg.DB_USER,
      password: cfg.DB_PASSWORD,
    });
    shared = { sequelize, models: initModels(sequelize) };
  }
  return shared;
}

/**
 * Make an existing connection the process-wide one (tests: a throw-away database; the models must
 * be bound to it). `closeSequelize()` will close it.
 */
export function setSharedDb(db: { sequelize: Sequelize; models: Models } | null): void {
  shared = db;
}

/** Close the process-wide connection (at shutdown, or between tests). */
export async function closeSequelize(): Promise<void> {
  const s = shared;
  shared = null;
  if (s) await s.sequelize.close();
}

/** One round trip to the database (`SELECT 1`); rejects when it cannot be reached. */
export async function pingDatabase(sequelize: Sequelize = getSequelize()): Promise<void> {
  await sequelize.query("SELECT 1");
}

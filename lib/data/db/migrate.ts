/**
 * Schema changes through umzug. Migrations are the files `migrations/NNNN-name.ts` (each exports
 * `up` and `down`), applied in name order and recorded in the `schema_migrations` table. A
 * landed migration is never edited: a change is a new file.
 */
import fs from "node:fs";
import path from "node:path";
import { fileURLToPath, pathToFileURL } from "node:url";
import type { QueryInterface, Sequelize } from "sequelize";
import { SequelizeStorage, Umzug } from "umzug";

export interface MigrationParams {
  context: QueryInterface;
  name: string;
}
export type MigrationFn = (params: MigrationParams) => Promise<void>;

export const MIGRATIONS_TABLE = "schema_migrations";
const MIGRATION_FILE = /^\d{4}-[a-z0-9-]+\.ts$/;

/** The folder that holds the migrations (repository root / migrations). */
export function migrationsDir(): string {
  return path.resolve(path.dirname(fileURLToPath(import.meta.url)), "../../../migrations");
}

async function loadMigrations(dir: string): Promise<{ name: string; up: MigrationFn; down: MigrationFn }[]> {
  const files = fs
    .readdirSync(dir)
    .filter((f) => MIGRATION_FILE.test(f))
    .sort();
  const out = [];
  for (const file of files) {
    const mod = (await import(pathToFileURL(path.join(dir, file)).href)) as { up?: MigrationFn; down?: MigrationFn };
    if (typeof mod.up !== "function" || typeof mod.down !== "function") {
      throw new Error(`Migration ${file} must export both up() and down().`);
    }
    out.push({ name: file.replace(/\.ts$/, ""), up: mod.up, down: mod.down });
  }
  return out;
}

export function createUmzug(sequelize: Sequelize, dir = migrationsDir()): Umzug<QueryInterface> {
  return new Umzug<QueryInterface>({
    migrations: async () => {
      const list = await loadMigrations(dir);
      return list.map((m) => ({
        name: m.name,
        up: ({ context }) => m.up({ context, name: m.name }),
        down: ({ context }) => m.down({ context, name: m.name }),
      }));
    },
    context: sequelize.getQueryInterface(),
    storage: new SequelizeStorage({ sequelize, tableName: MIGRATIONS_TABLE }),
    logger: undefined,
  });
}

/** Apply every pending migration; returns the names applied. */
export async function migrateUp(sequelize: Sequelize): Promise<string[]> {
  const done = await createUmzug(sequelize).up();
  return done.map((m) => m.name);
}

/**
 * Revert migrations: all of them when `to` is omitted, otherwise down to (and including) the
 * migration named `to` (umzug semantics). Returns the names reverted.
 */
export async function migrateDown(sequelize: Sequelize, to?: string): Promise<string[]> {
  const done = await createUmzug(sequelize).down({ to: to ?? 0 });
  return done.map((m) => m.name);
}

/** Names of applied and pending migrations. */
export async function migrationStatus(sequelize: Sequelize): Promise<{ executed: string[]; pending: string[] }> {
  const u = createUmzug(sequelize);
  const [executed, pending] = await Promise.all([u.executed(), u.pending()]);
  return { executed: executed.map((m) => m.name), pending: pending.map((m) => m.name) };
}

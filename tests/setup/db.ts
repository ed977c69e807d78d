/**
 * Per-file test databases on the run's throw-away MariaDB (tests/setup/global-db.ts):
 * `createTestDatabase()` makes a fresh, uniquely named database, runs every migration, and
 * returns a Sequelize connection with the models bound to it. Call `drop()` in afterAll.
 *
 *   let db: TestDatabase;
 *   beforeAll(async () => { db = await createTestDatabase(); });
 *   afterAll(async () => { await db.drop(); });
 *
 * Code under test that calls `getDb()` / `getSequelize()` (lib/ query functions, route handlers)
 * reaches the same database with `createTestDatabase("x", { asDefault: true })`.
 */
import { randomBytes } from "node:crypto";
import type { Sequelize } from "sequelize";
import { inject } from "vitest";
import { rootConnection } from "@/scripts/mariadb-server";
import { migrateUp } from "@/lib/data/db/migrate";
import { createSequelize, setSharedDb } from "@/lib/data/db/sequelize";
import { initModels, type Models } from "@/models";
import type { TestDbInfo } from "./global-db";

export interface TestDatabase {
  sequelize: Sequelize;
  models: Models;
  name: string;
  /** Connection details of the server (root through the socket). */
  server: TestDbInfo;
  /** Close the connection and drop the database. */
  drop(): Promise<void>;
}

export function testDbInfo(): TestDbInfo {
  let info: TestDbInfo | undefined;
  try {
    info = inject("testDb");
  } catch {
    info = undefined;
  }
  if (!info) {
    const port = Number(process.env.RG_TEST_DB_PORT);
    const socket = process.env.RG_TEST_DB_SOCKET;
    if (!port || !socket) {
      throw new Error(
        "No test MariaDB: run through vitest with globalSetup tests/setup/global-db.ts (and without RG_TEST_DB=off).",
      );
    }
    info = { host: "127.0.0.1", port, socket };
  }
  return info;
}

/** Create an empty database (no migrations) and connect to it. */
export async function createEmptyDatabase(prefix = "t"): Promise<Omit<TestDatabase, "models">> {
  const server = testDbInfo();
  const name = `${prefix}_${Date.now().toString(36)}_${randomBytes(4).toString("hex")}`;
  const conn = await rootConnection(server.socket);
  try {
    await conn.query(`CREATE DATABASE \`${name}\` CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
  } finally {
    await conn.end();
  }
  const sequelize = createSequelize({ socket: server.socket, database: name, user: "root", poolMax: 5 });
  return {
    sequelize,
    name,
    server,
    async drop() {
      await sequelize.close().catch(() => {});
      const c = await rootConnection(server.socket);
      try {
        await c.query(`DROP DATABASE IF EXISTS \`${name}\``);
      } finally {
        await c.end();
      }
    },
  };
}

/**
 * A fresh database with every migration applied and the models bound to it. With `asDefault`,
 * it also becomes the process-wide connection of lib/data/db/sequelize.ts until `drop()`.
 */
export async function createTestDatabase(prefix = "t", opts: { asDefault?: boolean } = {}): Promise<TestDatabase> {
  const db = await createEmptyDatabase(prefix);
  try {
    await migrateUp(db.sequelize);
  } catch (e) {
    await db.drop();
    throw e;
  }
  const models = initModels(db.sequelize);
  if (opts.asDefault) setSharedDb({ sequelize: db.sequelize, models });
  return {
    ...db,
    models,
    async drop() {
      if (opts.asDefault) setSharedDb(null);
      await db.drop();
    },
  };
}

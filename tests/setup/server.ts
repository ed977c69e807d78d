/**
 * The real Rimguard server for integration and end-to-end tests: the custom server (Next in
 * production mode + Socket.IO + the registered services) on 127.0.0.1, port 0, against a fresh
 * migrated test database (tests/setup/db.ts), optionally seeded with the demo.
 *
 *   let srv: TestServer;
 *   beforeAll(async () => { srv = await startTestServer({ seed: true }); });
 *   afterAll(async () => { await srv?.stop(); });
 *
 * Next needs a production build: if `.next/BUILD_ID` is missing, one `next build` runs first
 * (under a lock, so parallel test files build once). A build older than the sources is only
 * reported (a rebuild while other test files run would pull .next from under them); set
 * RG_TEST_REBUILD=1 to rebuild a stale build before the tests.
 */
import { spawnSync } from "node:child_process";
import { randomBytes } from "node:crypto";
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { resetConfigCache } from "@/lib/config";
import { rootConnection } from "@/scripts/mariadb-server";
import { closeSequelize } from "@/lib/data/db/sequelize";
import { resetAuthOptions } from "@/lib/auth/options";
import { seedDemo } from "@/lib/data/seed";
import { REPO_ROOT, startServer, type RunningServer, type StartServerOptions } from "@/server/index";
import { buildState } from "@/server/next-build";
import { createTestDatabase, type TestDatabase } from "./db";

export interface TestServer {
  url: string;
  port: number;
  db: TestDatabase;
  server: RunningServer;
  stop(): Promise<void>;
}

export interface TestServerOptions {
  /** Seed the demo scenario (tenants, users for every role, loops). Default true. */
  seed?: boolean;
  /** Service names to leave out (default: simulators). */
  skip?: StartServerOptions["skip"];
  /** The port the server connects to instead of the database's own (e.g. a proxy that can cut it off). */
  dbPort?: (databasePort: number) => Promise<number>;
}

/** Run `next build` once when no production build exists (or it is stale and RG_TEST_REBUILD=1). */
export function ensureNextBuild(): void {
  const state = buildState(REPO_ROOT);
  const rebuild = process.env.RG_TEST_REBUILD === "1";
  if (fs.existsSync(path.join(REPO_ROOT, ".next", "BUILD_ID"))) {
    if (!state.stale) return;
    if (!rebuild) {
      console.warn(`[test server] the Next build is stale (${state.why}); new or changed routes may answer 404. RG_TEST_REBUILD=1 rebuilds.`);
      return;
    }
  }
  const lock = path.join(os.tmpdir(), "rimguard-next-build.lock");
  const r = spawnSync(
    "flock",
    // Under the lock, skip the build when another test file finished one after we asked.
    [lock, "sh", "-c", `b=$(stat -c %Y .next/BUILD_ID 2>/dev/null || echo 0); [ "$b" -ge ${Math.floor(Date.now() / 1000)} ] || node_modules/.bin/next build`],
    {
      cwd: REPO_ROOT,
      stdio: "inherit",
      env: { ...process.env, NODE_ENV: "production", NEXT_TELEMETRY_DISABLED: "1" },
    },
  );
  if (r.status !== 0) throw new Error(`next build failed (exit ${r.status ?? r.signal})`);
}

/** The environment keys a test server changes; restored by stop(). */
const ENV_KEYS = [
  "NODE_ENV",
  "DB_HOST",
  "DB_PORT",
  "DB_NAME",
  "DB_USER",
  "DB_PASSWORD",
  "DB_EXTERNAL",
  "MQTT_PORT",
  "MQTTS_PORT",
  "SMTP_SINK_PORT",
  "S3_PORT",
  "SIMULATORS",
  "ALARM_JOURNAL_PATH",
  "NEXTAUTH_SECRET",
  "NEXTAUTH_URL",
  "PUBLIC_ORIGIN",
  "NEXT_TELEMETRY_DISABLED",
] as const;

export const TEST_NEXTAUTH_SECRET = "rimguard-test-secret-0123456789abcdef";

export async function startTestServer(opts: TestServerOptions = {}): Promise<TestServer> {
  ensureNextBuild();
  const db = await createTestDatabase("web");
  if (opts.seed ?? true) await seedDemo(db.sequelize, { models: db.models, bcryptCost: 4 });

  // The server connects over TCP with a user of its own, like in production.
  const user = `rgt_${randomBytes(4).toString("hex")}`;
  const password = randomBytes(12).toString("hex");
  const conn = await rootConnection(db.server.socket);
  try {
    await conn.query(`CREATE USER '${user}'@'127.0.0.1' IDENTIFIED BY '${password}'`);
    await conn.query(`GRANT ALL PRIVILEGES ON \`${db.name}\`.* TO '${user}'@'127.0.0.1'`);
  } finally {
    await conn.end();
  }

  const saved = Object.fromEntries(ENV_KEYS.map((k) => [k, process.env[k]]));
  const journalDir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-journal-"));
  Object.assign(process.env, {
    NODE_ENV: "production",
    DB_HOST: "127.0.0.1",
    DB_PORT: String(opts.dbPort ? await opts.dbPort(db.server.port) : db.server.port),
    DB_NAME: db.name,
    DB_USER: user,
    DB_PASSWORD: password,
    DB_EXTERNAL: "true",
    MQTT_PORT: "0",
    MQTTS_PORT: "0",
    SMTP_SINK_PORT: "0",
    S3_PORT: "0",
    SIMULATORS: "false",
    ALARM_JOURNAL_PATH: path.join(journalDir, "alarm-journal.ndjson"),
    NEXTAUTH_SECRET: TEST_NEXTAUTH_SECRET,
    NEXT_TELEMETRY_DISABLED: "1",
  });
  delete process.env.NEXTAUTH_URL;
  delete process.env.PUBLIC_ORIGIN;
  resetConfigCache();
  resetAuthOptions();

  let server: RunningServer;
  try {
    server = await startServer({ port: 0, host: "127.0.0.1", dev: false, quiet: true, skip: opts.skip ?? ["simulators"] });
  } catch (err) {
    restore();
    await db.drop();
    throw err;
  }

  function restore() {
    for (const [k, v] of Object.entries(saved)) {
      if (v === undefined) delete process.env[k];
      else process.env[k] = v;
    }
    resetConfigCache();
    resetAuthOptions();
  }

  return {
    url: server.url,
    port: server.port,
    db,
    server,
    async stop() {
      await server.stop();
      await closeSequelize();
      restore();
      const c = await rootConnection(db.server.socket);
      try {
        await c.query(`DROP USER IF EXISTS '${user}'@'127.0.0.1'`);
      } finally {
        await c.end();
      }
      await db.drop();
      fs.rmSync(journalDir, { recursive: true, force: true });
    },
  };
}

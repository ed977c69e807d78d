import fs from "node:fs";
import net from "node:net";
import os from "node:os";
import path from "node:path";
import mariadb from "mariadb";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import {
  defaultSocketPath,
  ensureMariaDb,
  findExecutable,
  freePort,
  portInUse,
  stopMariaDb,
  type MariaDbHandle,
} from "@/scripts/mariadb-server";
import { migrateUp } from "@/lib/data/db/migrate";
import { createSequelize } from "@/lib/data/db/sequelize";

// A second private server of its own (the run's shared test server is not touched).
let dir: string;
let dataDir: string;
let port: number;
let handle: MariaDbHandle | null = null;

beforeAll(async () => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-life-"));
  dataDir = path.join(dir, "data");
  port = await freePort();
});
afterAll(async () => {
  await stopMariaDb(dataDir).catch(() => false);
  fs.rmSync(dir, { recursive: true, force: true });
});

const opts = () => ({
  dataDir,
  port,
  socket: path.join(dir, "m.sock"),
  database: "rg_life",
  user: "rg_app",
  password: "app-secret",
  ephemeral: true,
  watchPid: process.pid,
  removeOnExit: dir,
});

describe("private MariaDB lifecycle", () => {
  it("initialises a data dir, starts on 127.0.0.1, creates the database (unicode collation) and the application user", async () => {
    handle = await ensureMariaDb(opts());
    expect(handle.reused).toBe(false);
    expect(await portInUse(port)).toBe(true);
    const conn = await mariadb.createConnection({ host: "127.0.0.1", port, user: "rg_app", password: "app-secret", database: "rg_life" });
    try {
      const rows = (await conn.query(
        "SELECT default_collation_name AS c FROM information_schema.schemata WHERE schema_name = 'rg_life'",
      )) as { c: string }[];
      expect(rows[0]?.c).toBe("utf8mb4_unicode_ci");
      await conn.query("CREATE TABLE keepme (id INT PRIMARY KEY)");
      await conn.query("INSERT INTO keepme VALUES (42)");
      // The application user has no rights outside its database.
      await expect(conn.query("CREATE DATABASE rg_other")).rejects.toThrow(/denied/i);
    } finally {
      await conn.end();
    }
    await expect(
      mariadb.createConnection({ host: "127.0.0.1", port, user: "rg_app", password: "wrong", connectTimeout: 2000 }),
    ).rejects.toThrow(/denied/i);
  });

  it("lets the application user run the migrations (triggers included) but not edit the alarm event log", async () => {
    const sequelize = createSequelize({ host: "127.0.0.1", port, database: "rg_life", user: "rg_app", password: "app-secret", poolMax: 2 });
    try {
      expect((await migrateUp(sequelize)).length).toBeGreaterThanOrEqual(4);
      const q = (sql: string) => sequelize.query(sql);
      await q("INSERT INTO tenants (slug, name) VALUES ('t', 'T')");
      await q("INSERT INTO sites (tenant_id, slug, name) SELECT id, 's', 'S' FROM tenants");
      await q(
        "INSERT INTO loops (tenant_id, site_id, tag, slug, kind, units, pv_lo, pv_hi, telemetry_period_s, controller_period_s, gain_value, estimation_period_s) " +
          "SELECT tenant_id, id, 'F-1', 'f-1', 'flow', 'm3/h', 0, 10, 1, 1, 1, 1 FROM sites",
      );
      await q("INSERT INTO alarms (tenant_id, loop_id, `condition`, priority) SELECT tenant_id, id, 'margin', 'low' FROM loops");
      await q("INSERT INTO alarm_events (tenant_id, alarm_id, loop_id, journal_id, at, kind) SELECT tenant_id, id, loop_id, 'j1', NOW(3), 'activate' FROM alarms");
      await expect(q("UPDATE alarm_events SET kind = 'x'")).rejects.toThrow(/append-only/);
      await expect(q("DELETE FROM alarm_events")).rejects.toThrow(/append-only/);
    } finally {
      await sequelize.close();
    }
  });

  it("reuses the running server when asked again (idempotent start)", async () => {
    const again = await ensureMariaDb(opts());
    expect(again.reused).toBe(true);
    expect(again.port).toBe(port);
  });

  it("refuses to start the same data dir on another port while it runs", async () => {
    await expect(ensureMariaDb({ ...opts(), port: port + 1 })).rejects.toThrow(/already running .* on port/);
  });

  it("stops from the pid file (as another process would), and says so when nothing runs", async () => {
    expect(await stopMariaDb(dataDir)).toBe(true);
    expect(await portInUse(port)).toBe(false);
    expect(await stopMariaDb(dataDir)).toBe(false);
  });

  it("restarts on the same data dir and keeps the data", async () => {
    handle = await ensureMariaDb(opts());
    expect(handle.reused).toBe(false);
    const conn = await mariadb.createConnection({ host: "127.0.0.1", port, user: "rg_app", password: "app-secret", database: "rg_life" });
    try {
      const rows = (await conn.query("SELECT id FROM keepme")) as { id: number }[];
      expect(rows.map((r) => r.id)).toEqual([42]);
    } finally {
      await conn.end();
    }
    await handle.stop();
    expect(await portInUse(port)).toBe(false);
  });

  it("fails with a clear message when another program holds the port", async () => {
    const blocker = net.createServer().listen(0, "127.0.0.1");
    await new Promise((r) => blocker.once("listening", r));
    const taken = (blocker.address() as net.AddressInfo).port;
    try {
      await expect(ensureMariaDb({ ...opts(), port: taken })).rejects.toThrow(/already in use by another program/);
    } finally {
      blocker.close();
    }
  });
});

describe("helpers", () => {
  it("find executables on the usual Debian paths and report a missing one as null", () => {
    expect(findExecutable(["mariadbd", "mysqld"])).toMatch(/mariadbd|mysqld/);
    expect(findExecutable(["rg-no-such-binary-xyz"])).toBeNull();
  });

  it("keep the default socket path short enough for a UNIX socket (< 100 bytes)", () => {
    const p = defaultSocketPath(path.join(os.tmpdir(), "a".repeat(150)), 3307);
    expect(Buffer.byteLength(p)).toBeLessThan(100);
    expect(p).not.toBe(defaultSocketPath(path.join(os.tmpdir(), "b"), 3307));
  });
});

/**
 * A dedicated MariaDB for the outage tests (scripts/mariadb-server.ts), because the run's shared
 * test server must not be stopped. `setUpOutageDb` registers the hooks that start it, migrate a
 * database with the alarm fixture and remove it all at the end; the holder's `stop()` and
 * `start()` take the server down and bring it back (start is idempotent).
 */
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import { QueryTypes, type Sequelize } from "sequelize";
import { afterAll, beforeAll } from "vitest";
import { migrateUp } from "@/lib/data/db/migrate";
import { createSequelize } from "@/lib/data/db/sequelize";
import { initModels, type Models } from "@/models";
import { ensureMariaDb, freePort, type MariaDbHandle } from "@/scripts/mariadb-server";
import { AlarmService } from "@/server/alarms/service";
import type { createDatabaseGate } from "@/server/db-gate";
import type { ServerContext } from "@/server/context";
import { lateBound } from "../helpers/late-bound";
import { createFixture, setTenantPolicy, type Fixture } from "./helpers";

export interface OutageDb {
  readonly sequelize: Sequelize;
  readonly models: Models;
  readonly fx: Fixture;
  stop(): Promise<void>;
  start(): Promise<void>;
}

export function setUpOutageDb(database: string): OutageDb {
  let dir = "";
  let port = 0;
  let handle: MariaDbHandle | undefined;
  let sequelize: Sequelize | undefined;
  let models: Models | undefined;
  let fx: Fixture | undefined;
  // Not `ephemeral`: its watchdog deletes the data dir when the server exits, and these tests restart it.
  const start = async () => {
    handle = await ensureMariaDb({
      dataDir: path.join(dir, "data"),
      port,
      socket: path.join(dir, "s.sock"),
      ephemeral: false,
      watchPid: process.pid,
      allowApt: false,
    });
  };
  beforeAll(async () => {
    dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-out-"));
    port = await freePort();
    await start();
    const root = createSequelize({ socket: handle!.socket, database: "mysql", user: "root" });
    await root.query(`CREATE DATABASE ${database} CHARACTER SET utf8mb4 COLLATE utf8mb4_unicode_ci`);
    await root.close();
    sequelize = createSequelize({ socket: handle!.socket, database, user: "root", poolMax: 3 });
    await migrateUp(sequelize);
    models = initModels(sequelize);
    fx = await createFixture(models);
    await setTenantPolicy(sequelize, fx.tenantId, { onDelayS: 0, offDelayS: 0, advisoryOnDelayS: 0 });
  });
  afterAll(async () => {
    await sequelize?.close().catch(() => {});
    await handle?.stop().catch(() => {});
    if (dir) fs.rmSync(dir, { recursive: true, force: true });
  });
  const stop = async () => {
    await handle?.stop();
  };
  return lateBound<OutageDb>("outage database", () => ({ sequelize, models, fx, stop, start }));
}

/** Right after a database restart the first query on a stale pooled connection may fail: retry. */
export async function retryAfterRestart<T>(fn: () => Promise<T>): Promise<T> {
  for (let i = 0; ; i++) {
    try {
      return await fn();
    } catch (e) {
      if (i >= 30) throw e;
      await new Promise((r) => setTimeout(r, 200));
    }
  }
}

export function flushEventually(svc: AlarmService): Promise<void> {
  return retryAfterRestart(() => svc.flush());
}

/** The alarm service of these tests: retry every 100 ms, the journal limit as given. */
export function startOutageService(db: OutageDb, ctx: ServerContext, journalPath: string, journalMaxBytes?: number): Promise<AlarmService> {
  return AlarmService.start(ctx, { sequelize: db.sequelize, journalPath, journalMaxBytes, retryMs: 100, quiet: true });
}

export async function eventsOf(db: OutageDb, alarmIds: number[]) {
  return (await db.sequelize.query(
    `SELECT journal_id, alarm_id, kind, to_state, user_id FROM alarm_events WHERE alarm_id IN (${alarmIds.map(() => "?").join(",")}) ORDER BY journal_id`,
    { replacements: alarmIds, type: QueryTypes.SELECT },
  )) as {
    journal_id: string;
    alarm_id: number;
    kind: string;
    to_state: string;
    user_id: number | null;
  }[];
}

/** What the page gate does with a GET of `path`: status 0 when it lets the request through. */
export async function gateAnswer(gate: ReturnType<typeof createDatabaseGate>, path: string): Promise<{ status: number; body: string }> {
  let status = 0;
  let body = "";
  const res = {
    writeHead(s: number) {
      status = s;
      return res;
    },
    end(b?: string) {
      body = b ?? "";
    },
  };
  await gate({ method: "GET", url: path } as never, res as never);
  return { status, body };
}

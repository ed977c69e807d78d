/**
 * vitest globalSetup: ONE throw-away MariaDB for the whole run (a fresh data dir under
 * os.tmpdir(), a free port, never .data/), stopped and deleted at the end. A watchdog stops it
 * too if the vitest process dies without tearing down. Test files reach it through
 * `inject("testDb")` (tests/setup/db.ts does that) or the RG_TEST_DB_* environment variables.
 * The server starts once per run (~2 s); pure unit tests never connect to it. RG_TEST_DB=off
 * skips it (for a run of pure unit tests only); a test that needs it then fails with a message.
 */
import fs from "node:fs";
import os from "node:os";
import path from "node:path";
import type { TestProject } from "vitest/node";
import { ensureMariaDb, freePort } from "@/scripts/mariadb-server";

export interface TestDbInfo {
  host: string;
  port: number;
  socket: string;
}

declare module "vitest" {
  export interface ProvidedContext {
    testDb: TestDbInfo;
  }
}

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  if (process.env.RG_TEST_DB === "off") return async () => {};
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), "rg-tdb-"));
  const port = await freePort();
  const handle = await ensureMariaDb({
    dataDir: path.join(dir, "data"),
    port,
    socket: path.join(dir, "s.sock"),
    ephemeral: true,
    watchPid: process.pid,
    removeOnExit: dir,
    allowApt: false,
  });
  const info: TestDbInfo = { host: "127.0.0.1", port: handle.port, socket: handle.socket };
  project.provide("testDb", info);
  process.env.RG_TEST_DB_PORT = String(info.port);
  process.env.RG_TEST_DB_SOCKET = info.socket;
  return async () => {
    await handle.stop();
    fs.rmSync(dir, { recursive: true, force: true });
  };
}

/** A throw-away MariaDB for a benchmark: temporary data directory, free port, stopped with this process, schema migrated. */
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";

export async function startBenchDatabase({ name, foreignKeyChecks = true }: { name: string; foreignKeyChecks?: boolean }) {
  const { ensureMariaDb, freePort, rootConnection } = await import("@/scripts/mariadb-server");
  const { createSequelize } = await import("@/lib/db/sequelize");
  const { migrateUp } = await import("@/lib/db/migrate");
  const dbDir = mkdtempSync(path.join(os.tmpdir(), `${name.replace(/_/g, "-")}-`));
  const password = "bench-db-pw-0123";
  const handle = await ensureMariaDb({
    dataDir: path.join(dbDir, "data"),
    port: await freePort(),
    socket: path.join(dbDir, "s.sock"),
    ephemeral: true,
    watchPid: process.pid,
    removeOnExit: dbDir,
    allowApt: false,
    database: name,
    user: name,
    password,
  });
  if (!foreignKeyChecks) {
    const root = await rootConnection(handle.socket);
    await root.query("SET GLOBAL foreign_key_checks = 0");
    await root.end();
  }
  const sequelize = createSequelize({ socket: handle.socket, database: name, user: name, password });
  await migrateUp(sequelize);
  const pid = Number(readFileSync(path.join(handle.dataDir, "mariadbd.pid"), "utf8").trim());
  return {
    sequelize,
    /** The server's process id (for its CPU and memory). */
    pid,
    async stop() {
      await sequelize.close();
      await handle.stop();
      rmSync(dbDir, { recursive: true, force: true });
    },
  };
}

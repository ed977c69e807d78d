/**
 * Helpers shared by the pipeline and backfill benches (plain scripts, not tests): quantiles,
 * per-process CPU and RSS from /proc, and a throw-away MariaDB with the schema migrated.
 */
import { readFileSync, mkdtempSync, rmSync } from "node:fs";
import os from "node:os";
import path from "node:path";

/**
 * Run a bench script: `main`, or the helper process a flag names (e.g. `--client`), exiting with
 * 1 and the error on failure.
 */
export function runBench(main: () => Promise<void>, helpers: Record<string, () => Promise<void>> = {}): void {
  const flag = Object.keys(helpers).find((f) => process.argv.includes(f));
  const fail = (e: unknown) => {
    console.error(e);
    process.exit(1);
  };
  if (flag) helpers[flag]!().catch(fail);
  else main().then(() => process.exit(0), fail);
}

export function quantile(sorted: number[], q: number): number | null {
  if (sorted.length === 0) return null;
  return sorted[Math.min(sorted.length - 1, Math.floor(q * sorted.length))]!;
}

/** CPU seconds (user + system) and RSS bytes of a process, from /proc (Linux). */
export function procStats(pid: number): { cpuS: number; rss: number } | null {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, "utf8");
    const fields = stat.slice(stat.lastIndexOf(")") + 2).split(" ");
    const ticks = Number(fields[11]) + Number(fields[12]);
    const status = readFileSync(`/proc/${pid}/status`, "utf8");
    const rssKb = Number(/VmRSS:\s+(\d+)/.exec(status)?.[1] ?? 0);
    return { cpuS: ticks / 100, rss: rssKb * 1024 };
  } catch {
    return null;
  }
}

/** A throw-away MariaDB (temporary data directory, free port, stopped with this process) with the schema migrated. */
export async function startBenchDatabase(opts: { foreignKeys?: boolean } = {}) {
  const { ensureMariaDb, freePort, rootConnection } = await import("@/scripts/mariadb-server");
  const { createSequelize } = await import("@/lib/db/sequelize");
  const { migrateUp } = await import("@/lib/db/migrate");
  const dbDir = mkdtempSync(path.join(os.tmpdir(), "rg-bdb-"));
  const handle = await ensureMariaDb({
    dataDir: path.join(dbDir, "data"),
    port: await freePort(),
    socket: path.join(dbDir, "s.sock"),
    ephemeral: true,
    watchPid: process.pid,
    removeOnExit: dbDir,
    allowApt: false,
    database: "rg_bench",
    user: "rg_bench",
    password: "bench-db-pw-0123",
  });
  // the pipeline bench has no tenant, site or loop rows: loop_states (keyed to loops) would refuse every write
  if (opts.foreignKeys !== true) {
    const root = await rootConnection(handle.socket);
    await root.query("SET GLOBAL foreign_key_checks = 0");
    await root.end();
  }
  const sequelize = createSequelize({ socket: handle.socket, database: "rg_bench", user: "rg_bench", password: "bench-db-pw-0123" });
  await migrateUp(sequelize);
  const pid = Number(readFileSync(path.join(handle.dataDir, "mariadbd.pid"), "utf8").trim());
  return {
    sequelize,
    pid,
    async stop() {
      await sequelize.close();
      await handle.stop();
      rmSync(dbDir, { recursive: true, force: true });
    },
  };
}


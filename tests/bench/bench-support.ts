/**
 * Helpers shared by the pipeline and backfill benches (plain scripts, not tests): how a bench
 * script runs, quantiles, per-process CPU and RSS from /proc. The bench MariaDB is ./bench-database.ts.
 */
import { readFileSync } from "node:fs";

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

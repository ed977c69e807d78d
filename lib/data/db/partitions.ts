/**
 * Daily partitions of the history tables (samples_1s, samples_1m, pole_snapshots), which are
 * PARTITION BY RANGE (t) with `t` in epoch milliseconds (UTC). Partition `pYYYYMMDD` holds rows
 * with t < the start of the following UTC day; `pmax` (LESS THAN MAXVALUE) catches anything
 * later, so an insert never fails for want of a partition. New days are split out of `pmax`
 * ahead of time (cheap while pmax is empty); old days are removed with DROP PARTITION, which
 * frees the space at once (never DELETE).
 */
import { QueryTypes, type Sequelize } from "sequelize";

export const HISTORY_TABLES = ["samples_1s", "samples_1m", "pole_snapshots"] as const;
export type HistoryTable = (typeof HISTORY_TABLES)[number];

export const DAY_MS = 86_400_000;

export interface PartitionInfo {
  name: string;
  /** Exclusive upper bound in epoch ms; null for pmax (MAXVALUE). */
  lessThan: number | null;
  rows: number;
}

function assertTable(table: string): asserts table is HistoryTable {
  if (!(HISTORY_TABLES as readonly string[]).includes(table)) {
    throw new Error(`Not a partitioned history table: ${table}`);
  }
}

/** Start of the UTC day containing `t` (epoch ms or Date). */
export function dayStart(t: number | Date): number {
  const ms = typeof t === "number" ? t : t.getTime();
  return Math.floor(ms / DAY_MS) * DAY_MS;
}

/** Partition name of the UTC day that starts at `day`: p20261201. */
export function partitionName(day: number): string {
  return `p${new Date(dayStart(day)).toISOString().slice(0, 10).replace(/-/g, "")}`;
}

/** The table's partitions in order, with their bounds and (estimated) row counts. */
export async function listPartitions(sequelize: Sequelize, table: string): Promise<PartitionInfo[]> {
  assertTable(table);
  const rows = await sequelize.query<{ name: string; descr: string | null; n: number | string | null }>(
    `SELECT partition_name AS name, partition_description AS descr, table_rows AS n
       FROM information_schema.partitions
      WHERE table_schema = DATABASE() AND table_name = ? AND partition_name IS NOT NULL
      ORDER BY partition_ordinal_position`,
    { replacements: [table], type: QueryTypes.SELECT },
  );
  return rows.map((r) => ({
    name: r.name,
    lessThan: r.descr === null || r.descr === "MAXVALUE" ? null : Number(r.descr),
    rows: Number(r.n ?? 0),
  }));
}

/**
 * Make sure every UTC day from `fromDay` to `toDay` (inclusive; epoch ms or Date, any time in
 * the day) has its own partition. Days at or before the newest existing daily partition are
 * already covered by it and are skipped. Returns the names of the partitions created.
 */
export async function ensurePartitions(
  sequelize: Sequelize,
  table: string,
  fromDay: number | Date,
  toDay: number | Date,
): Promise<string[]> {
  assertTable(table);
  const from = dayStart(fromDay);
  const to = dayStart(toDay);
  if (to < from) throw new RangeError("ensurePartitions: toDay is before fromDay.");
  if ((to - from) / DAY_MS > 3660) throw new RangeError("ensurePartitions: more than ten years of partitions requested.");
  const existing = await listPartitions(sequelize, table);
  const bounded = existing.filter((p) => p.lessThan !== null).map((p) => p.lessThan as number);
  const newest = bounded.length ? Math.max(...bounded) : -Infinity;
  const defs: string[] = [];
  const names: string[] = [];
  for (let day = from; day <= to; day += DAY_MS) {
    const upper = day + DAY_MS;
    if (upper <= newest) continue;
    names.push(partitionName(day));
    defs.push(`PARTITION ${partitionName(day)} VALUES LESS THAN (${upper})`);
  }
  if (!defs.length) return [];
  await sequelize.query(
    `ALTER TABLE \`${table}\` REORGANIZE PARTITION pmax INTO (${defs.join(", ")}, PARTITION pmax VALUES LESS THAN MAXVALUE)`,
  );
  return names;
}

/**
 * Drop every daily partition whose rows all lie before the start of `day` (its upper bound is at
 * or below it). pmax is never dropped. Returns the names of the partitions dropped.
 */
export async function dropPartitionsBefore(sequelize: Sequelize, table: string, day: number | Date): Promise<string[]> {
  assertTable(table);
  const cutoff = dayStart(day);
  const old = (await listPartitions(sequelize, table)).filter((p) => p.lessThan !== null && p.lessThan <= cutoff);
  if (!old.length) return [];
  const names = old.map((p) => p.name);
  for (const n of names) if (!/^p\d{8}$/.test(n)) throw new Error(`Unexpected partition name ${n}`);
  await sequelize.query(`ALTER TABLE \`${table}\` DROP PARTITION ${names.join(", ")}`);
  return names;
}

/**
 * Housekeeping for all history tables: partitions from today to `aheadDays` ahead, and old days
 * dropped per retention (second tier in hours, minute tier and pole snapshots in days).
 */
export async function maintainHistoryPartitions(
  sequelize: Sequelize,
  opts: { now?: number; aheadDays?: number; secondRetentionH: number; minuteRetentionD: number },
): Promise<{ created: Record<string, string[]>; dropped: Record<string, string[]> }> {
  const now = opts.now ?? Date.now();
  const ahead = opts.aheadDays ?? 3;
  const created: Record<string, string[]> = {};
  const dropped: Record<string, string[]> = {};
  const keepFrom: Record<HistoryTable, number> = {
    samples_1s: now - opts.secondRetentionH * 3_600_000,
    samples_1m: now - opts.minuteRetentionD * DAY_MS,
    pole_snapshots: now - opts.minuteRetentionD * DAY_MS,
  };
  for (const table of HISTORY_TABLES) {
    created[table] = await ensurePartitions(sequelize, table, now, now + ahead * DAY_MS);
    dropped[table] = await dropPartitionsBefore(sequelize, table, keepFrom[table]);
  }
  return { created, dropped };
}

/**
 * Run `maintainHistoryPartitions` now and then every `everyMs` (default one hour), for the
 * history service of the long-running server. Failures go to `onError` and are retried at the
 * next tick (pmax keeps inserts working meanwhile). Returns a stop function.
 */
export function schedulePartitionMaintenance(
  sequelize: Sequelize,
  opts: {
    secondRetentionH: number;
    minuteRetentionD: number;
    aheadDays?: number;
    everyMs?: number;
    now?: () => number;
    onError?: (e: unknown) => void;
  },
): { stop(): void; runNow(): Promise<void> } {
  const runNow = async () => {
    try {
      await maintainHistoryPartitions(sequelize, { ...opts, now: (opts.now ?? Date.now)() });
    } catch (e) {
      opts.onError?.(e);
    }
  };
  void runNow();
  const timer = setInterval(() => void runNow(), opts.everyMs ?? 3_600_000);
  timer.unref();
  return { stop: () => clearInterval(timer), runNow };
}

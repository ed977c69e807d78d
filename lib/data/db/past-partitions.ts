/**
 * Daily partitions for days before the oldest one, for history written after the fact (a
 * historian backfill). Range partitions are ordered, and the oldest partition holds every row
 * below its bound: a row of an older day would land there and be dropped with that partition's
 * day. So the oldest partition is split (REORGANIZE PARTITION, rows kept) into one partition per
 * day from the day needed up to its own day. See lib/data/db/partitions.ts for the naming and for
 * the days ahead.
 */
import type { Sequelize } from "sequelize";
import { DAY_MS, dayStart, ensurePartitions, listPartitions, partitionName, type HistoryTable } from "./partitions";

/**
 * Make sure the UTC day of `day` has its own partition in `table`, creating the days between it
 * and the oldest existing partition too. Returns the names created (empty when already covered).
 */
export async function ensurePastPartition(sequelize: Sequelize, table: HistoryTable, day: number, now: number): Promise<string[]> {
  const from = dayStart(day);
  const bounded = (await listPartitions(sequelize, table)).filter((p) => p.lessThan !== null);
  // Only pmax: the days from `day` to today are split out of it (later days come from the housekeeping).
  if (bounded.length === 0) return ensurePartitions(sequelize, table, from, Math.max(from, now));
  const oldest = bounded[0]!;
  const ownDay = (oldest.lessThan as number) - DAY_MS;
  if (from >= ownDay) return [];
  if (oldest.name !== partitionName(ownDay)) throw new Error(`Unexpected oldest partition ${oldest.name} of ${table}.`);
  if ((ownDay - from) / DAY_MS > 3660) throw new RangeError("ensurePastPartition: more than ten years of partitions requested.");
  const defs: string[] = [];
  const names: string[] = [];
  for (let d = from; d < ownDay; d += DAY_MS) {
    names.push(partitionName(d));
    defs.push(`PARTITION ${partitionName(d)} VALUES LESS THAN (${d + DAY_MS})`);
  }
  await sequelize.query(
    `ALTER TABLE \`${table}\` REORGANIZE PARTITION ${oldest.name} INTO (${defs.join(", ")}, PARTITION ${oldest.name} VALUES LESS THAN (${oldest.lessThan}))`,
  );
  return names;
}

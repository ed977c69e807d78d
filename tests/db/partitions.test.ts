import { afterAll, beforeAll, describe, expect, it } from "vitest";
import {
  DAY_MS,
  dayStart,
  dropPartitionsBefore,
  ensurePartitions,
  listPartitions,
  maintainHistoryPartitions,
  partitionName,
} from "@/lib/data/db/partitions";
import { createTestDatabase, type TestDatabase } from "@/tests/setup/db";

let db: TestDatabase;
beforeAll(async () => {
  db = await createTestDatabase("parts");
});
afterAll(async () => {
  await db?.drop();
});

const D1 = Date.UTC(2026, 10, 28); // 2026-11-28 00:00 UTC
const at = (day: number, hours = 12) => day + hours * 3_600_000;

async function rowsOf(table: string): Promise<number[]> {
  const [rows] = await db.sequelize.query(`SELECT t FROM ${table} ORDER BY t`);
  return (rows as { t: number }[]).map((r) => Number(r.t));
}

describe("day helpers", () => {
  it("name a UTC day and find its start", () => {
    expect(partitionName(D1)).toBe("p20261128");
    expect(partitionName(at(D1, 23.99))).toBe("p20261128");
    expect(dayStart(at(D1, 5))).toBe(D1);
    expect(dayStart(new Date(at(D1 + DAY_MS, 1)))).toBe(D1 + DAY_MS);
  });
});

describe("daily partitions of a history table", () => {
  it("start with only the catch-all partition", async () => {
    const parts = await listPartitions(db.sequelize, "samples_1m");
    expect(parts.map((p) => p.name)).toEqual(["pmax"]);
    expect(parts[0]?.lessThan).toBeNull();
  });

  it("are created for each day in the range, bounded at the next UTC midnight", async () => {
    const created = await ensurePartitions(db.sequelize, "samples_1m", D1, at(D1 + 2 * DAY_MS));
    expect(created).toEqual(["p20261128", "p20261129", "p20261130"]);
    const parts = await listPartitions(db.sequelize, "samples_1m");
    expect(parts.map((p) => [p.name, p.lessThan])).toEqual([
      ["p20261128", D1 + DAY_MS],
      ["p20261129", D1 + 2 * DAY_MS],
      ["p20261130", D1 + 3 * DAY_MS],
      ["pmax", null],
    ]);
  });

  it("are not duplicated when asked again, and are extended forward only", async () => {
    expect(await ensurePartitions(db.sequelize, "samples_1m", D1, D1 + 2 * DAY_MS)).toEqual([]);
    expect(await ensurePartitions(db.sequelize, "samples_1m", D1 + DAY_MS, D1 + 3 * DAY_MS)).toEqual(["p20261201"]);
  });

  it("hold rows of every day, and rows beyond the prepared days land in pmax (nothing lost)", async () => {
    const times = [at(D1 - DAY_MS), at(D1), at(D1 + DAY_MS), at(D1 + 2 * DAY_MS), at(D1 + 3 * DAY_MS), at(D1 + 10 * DAY_MS)];
    const values = times.map((t) => `(1, ${t}, 0.9, 0.92, 0.95, 60)`).join(", ");
    await db.sequelize.query(`INSERT INTO samples_1m (loop_id, t, radius_min, radius_mean, radius_max, n) VALUES ${values}`);
    expect(await rowsOf("samples_1m")).toEqual(times);
    const [explain] = await db.sequelize.query(
      `SELECT PARTITION_NAME AS name, TABLE_ROWS AS n FROM information_schema.partitions
        WHERE table_schema = DATABASE() AND table_name = 'samples_1m'`,
    );
    expect((explain as { name: string }[]).map((r) => r.name)).toContain("pmax");
    const [inMax] = await db.sequelize.query("SELECT COUNT(*) AS n FROM samples_1m PARTITION (pmax)");
    expect(Number((inMax as { n: number }[])[0]?.n)).toBe(1);
    // The first daily partition also holds anything older than its own day.
    const [inFirst] = await db.sequelize.query("SELECT COUNT(*) AS n FROM samples_1m PARTITION (p20261128)");
    expect(Number((inFirst as { n: number }[])[0]?.n)).toBe(2);
  });

  it("are dropped before a day with their rows, keeping newer days and pmax", async () => {
    const dropped = await dropPartitionsBefore(db.sequelize, "samples_1m", at(D1 + 2 * DAY_MS, 3));
    expect(dropped).toEqual(["p20261128", "p20261129"]);
    expect(await rowsOf("samples_1m")).toEqual([at(D1 + 2 * DAY_MS), at(D1 + 3 * DAY_MS), at(D1 + 10 * DAY_MS)]);
    expect((await listPartitions(db.sequelize, "samples_1m")).map((p) => p.name)).toEqual(["p20261130", "p20261201", "pmax"]);
    expect(await dropPartitionsBefore(db.sequelize, "samples_1m", D1 + 2 * DAY_MS)).toEqual([]);
  });

  it("refuse tables that are not history tables and inverted ranges", async () => {
    await expect(ensurePartitions(db.sequelize, "users", D1, D1)).rejects.toThrow(/Not a partitioned history table/);
    await expect(dropPartitionsBefore(db.sequelize, "alarm_events", D1)).rejects.toThrow(/Not a partitioned history table/);
    await expect(ensurePartitions(db.sequelize, "samples_1s", D1 + DAY_MS, D1)).rejects.toThrow(RangeError);
  });
});

describe("maintainHistoryPartitions", () => {
  it("prepares days ahead on every history table and prunes by each tier's retention", async () => {
    const now = at(D1 + 20 * DAY_MS, 10);
    const first = await maintainHistoryPartitions(db.sequelize, { now, aheadDays: 2, secondRetentionH: 6, minuteRetentionD: 180 });
    expect(first.created.samples_1s).toEqual([partitionName(now), partitionName(now + DAY_MS), partitionName(now + 2 * DAY_MS)]);
    expect(first.created.pole_snapshots).toHaveLength(3);
    // Three days later: the second tier keeps only the days reaching back 6 h; the minute tier keeps all.
    const later = now + 3 * DAY_MS;
    const second = await maintainHistoryPartitions(db.sequelize, { now: later, aheadDays: 2, secondRetentionH: 6, minuteRetentionD: 180 });
    expect(second.dropped.samples_1s).toEqual([partitionName(now), partitionName(now + DAY_MS), partitionName(now + 2 * DAY_MS)]);
    expect(second.dropped.samples_1m).toEqual([]);
    const names = (await listPartitions(db.sequelize, "samples_1s")).map((p) => p.name);
    expect(names[0]).toBe(partitionName(later));
    expect(names[names.length - 1]).toBe("pmax");
  });
});

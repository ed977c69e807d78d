import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { MIGRATIONS_TABLE, migrateDown, migrateUp, migrationStatus } from "@/lib/data/db/migrate";
import { createEmptyDatabase } from "@/tests/setup/db";

type Db = Awaited<ReturnType<typeof createEmptyDatabase>>;

async function tableNames(db: Db): Promise<string[]> {
  const [rows] = await db.sequelize.query(
    "SELECT table_name AS name FROM information_schema.tables WHERE table_schema = ? ORDER BY table_name",
    { replacements: [db.name] },
  );
  return (rows as { name: string }[]).map((r) => r.name).sort();
}

async function triggerNames(db: Db): Promise<string[]> {
  const [rows] = await db.sequelize.query(
    "SELECT trigger_name AS name FROM information_schema.triggers WHERE trigger_schema = ? ORDER BY trigger_name",
    { replacements: [db.name] },
  );
  return (rows as { name: string }[]).map((r) => r.name).sort();
}

const EXPECTED_TABLES = [
  "alarm_events",
  "alarm_occurrences",
  "alarm_policies",
  "alarms",
  "areas",
  "config_changes",
  "device_credentials",
  "drift_checkpoint_chunks",
  "drift_checkpoints",
  "export_assessments",
  "estimator_checkpoints",
  "handover_confirmations",
  "history_backfills",
  "invitations",
  "loop_assessments",
  "loop_daily_summaries",
  "loop_states",
  "loops",
  "membership_sites",
  "memberships",
  "notification_rules",
  "notifications_sent",
  "operator_notes",
  "pole_snapshots",
  "report_runs",
  "report_subscriptions",
  "session_revocations",
  "samples_1m",
  "samples_1s",
  "sites",
  "sparkplug_births",
  "sparkplug_groups",
  "sparkplug_mappings",
  "step_tests",
  "tenants",
  "users",
  "work_item_events",
  "work_items",
  "work_list_settings",
];

describe("migrations on an empty database", () => {
  let db: Db;
  beforeAll(async () => {
    db = await createEmptyDatabase("mig");
  });
  afterAll(async () => {
    await db.drop();
  });

  it("creates every table, the append-only triggers, and records each migration", async () => {
    const applied = await migrateUp(db.sequelize);
    expect(applied.length).toBeGreaterThanOrEqual(4);
    const tables = await tableNames(db);
    expect(tables).toEqual([...EXPECTED_TABLES, MIGRATIONS_TABLE].sort());
    expect(await triggerNames(db)).toEqual(["alarm_events_no_delete", "alarm_events_no_update", "operator_notes_no_delete", "operator_notes_no_update", "work_item_events_no_delete", "work_item_events_no_update"]);
    const status = await migrationStatus(db.sequelize);
    expect(status.pending).toEqual([]);
    expect(status.executed).toEqual(applied);
  });

  it("is a no-op when run again", async () => {
    expect(await migrateUp(db.sequelize)).toEqual([]);
  });

  it("uses the unicode collation on every table", async () => {
    const [rows] = await db.sequelize.query(
      "SELECT table_name AS name, table_collation AS c FROM information_schema.tables WHERE table_schema = ? AND table_name <> ?",
      { replacements: [db.name, MIGRATIONS_TABLE] },
    );
    for (const r of rows as { name: string; c: string }[]) expect(`${r.name}:${r.c}`).toBe(`${r.name}:utf8mb4_unicode_ci`);
  });

  it("reverts everything, leaving only the migrations table, and re-applies cleanly", async () => {
    const reverted = await migrateDown(db.sequelize);
    expect(reverted.length).toBeGreaterThanOrEqual(4);
    expect(await tableNames(db)).toEqual([MIGRATIONS_TABLE]);
    expect(await triggerNames(db)).toEqual([]);
    const [meta] = await db.sequelize.query(`SELECT COUNT(*) AS n FROM ${MIGRATIONS_TABLE}`);
    expect(Number((meta as { n: number }[])[0]?.n)).toBe(0);
    await migrateUp(db.sequelize);
    expect((await tableNames(db)).length).toBe(EXPECTED_TABLES.length + 1);
  });

  it("0131 adds the loop's dead time (nullable, s) and its down removes it", async () => {
    const cols = async () =>
      ((await db.sequelize.query("SELECT column_name AS c, is_nullable AS n FROM information_schema.columns WHERE table_schema = ? AND table_name = 'loops' AND column_name = 'dead_time_s'", { replacements: [db.name] }))[0] as { c: string; n: string }[]);
    expect(await cols()).toEqual([{ c: "dead_time_s", n: "YES" }]);
    const name = (await migrationStatus(db.sequelize)).executed.find((m) => m.startsWith("0131-"))!;
    expect(name).toBeDefined();
    const reverted = await migrateDown(db.sequelize, name);
    expect(reverted).toContain(name);
    expect(await cols()).toEqual([]);
    await migrateUp(db.sequelize);
    expect(await cols()).toHaveLength(1);
  });

  it("steps down one migration at a time", async () => {
    const { executed } = await migrationStatus(db.sequelize);
    const last = executed[executed.length - 1]!;
    expect(await migrateDown(db.sequelize, last)).toEqual([last]);
    expect((await migrationStatus(db.sequelize)).pending).toEqual([last]);
    await migrateUp(db.sequelize);
  });
});
